//! # coilwise-host-tests: a numerical coil plant for driver tests
//!
//! A time-domain simulation of relay / solenoid coils driven by a transistor,
//! with the clamp actually fitted, a moving armature, and injectable faults —
//! behind the same embedded-hal 1.0 traits a board would implement. It is the
//! *reference* the closed-form estimators of `coilwise` are tested against,
//! so it is numerical and shares no formulas with them.
//!
//! Coils store energy: an unclamped coil can put hundreds of volts on a
//! switch. Results are engineering estimates from a simplified model; check
//! real designs against the component datasheets, local electrical codes and
//! licensed practice.
//!
//! ## What is modelled
//!
//! * Winding resistance, reluctance-law inductance `L(x)` over the armature
//!   position ([`Coil`]), flux linkage as the state: `dλ/dt = v_coil − R·i`,
//!   `i = λ/L(x)`, so a moving armature gives the back-EMF dip.
//! * Armature: virtual-work force `½·i²·dL/dx`, spring preload and rate,
//!   mass, damping, hard stops with restitution ([`Armature`]).
//! * Low-side or high-side switch: MOSFET (on-resistance, avalanche,
//!   body diode) or bipolar (saturation) ([`Switch`]); sense resistor;
//!   wiring resistance; supply with source resistance and bulk capacitor
//!   shared by all channels ([`Supply`]).
//! * Clamps ([`Clamp`]): none (avalanche), Shockley diode with series
//!   resistance, diode + zener, diode + resistor, TVS; optional RC
//!   [`Snubber`] (capacitor state).
//! * Coupled secondary loops ([`magnetics`]): an eddy-current loop
//!   ([`CoupledLoop`], its own resistance and self inductance, coupling `k`
//!   to the winding) and a bridged section of shorted turns
//!   ([`Fault::ShortedTurns`]: the section is a closed loop, coupled to the
//!   rest of the winding, through the insulation-fault bridge). Every loop
//!   has its own flux linkage state; `M = k·sqrt(L₁·L₂)` in a common-flux
//!   (leakage) form that is positive definite for every `k < 1`. A step on
//!   the terminal then gives a two-exponential current.
//! * Saturation ([`Saturation`]): the core branch follows
//!   `L(i) = L₀·(1 − d·u²/(1 + u²))`, `u = i/i_knee`, integrated in
//!   flux-linkage form, with the stored energy and the armature force taken
//!   from the co-energy, so the energy books stay exact.
//! * A residual current at switch-on ([`Bench::set_current`]).
//! * Faults and magnetics at any time ([`Fault`], [`Bench::set_magnetics`]):
//!   open, short, shorted turns (coupled, or the lumped
//!   [`Fault::ShortedTurnsLumped`]), added series resistance, stuck armature;
//!   supply changes.
//! * Converter ([`AdcConfig`]): quantisation, offset of either sign with
//!   clipping at zero and full scale, gain error, seeded Gaussian noise,
//!   sampling-start latency and jitter; comparator offset and propagation
//!   delay ([`ComparatorErrors`]).
//! * Energy bookkeeping per channel ([`Energy`]) that closes to the
//!   integration tolerance (winding, bridge and eddy losses included).
//!
//! Not modelled: hysteresis, eddy currents beyond one lumped loop, a
//! saturation knee that moves with the armature (the knee is in ampere-turns
//! of the core branch, the same at every position), diode
//! reverse recovery, switching transients of the transistor (gate charge),
//! node capacitance, temperature rise during a run. After the clamp blocks,
//! secondary loops decay on their own (their induced voltage does not
//! forward-bias the clamp again).
//!
//! ## Integration
//!
//! Bogacki–Shampine 3(2) (an embedded explicit Runge–Kutta pair, FSAL) with
//! error control on flux linkages, position, velocity, capacitor and rail
//! voltage (and, on channels with coupled loops or saturation, on the energy
//! integrals too),
//! `rel_tol = 1e-7` and `1e-8 A` absolute by default, steps of at most
//! 10 µs. The node voltage at the switch is algebraic and solved each
//! evaluation with a safeguarded Newton iteration; the diode law is used in
//! its explicit current→voltage form, so there is no stiff node. Steps land
//! exactly on gate/PWM edges, recorder samples, end-stop contacts (within
//! 1e-9 of the stroke) and on current zero; with the switch off and no
//! snubber, a current below 1 µA is set to zero (diode blocking). A bench
//! whose derivative is exactly zero (all at rest) skips ahead. Verified
//! accuracy: see the crate tests (`tests/sim_*.rs`) and the README table.
//!
//! ## Features
//!
//! * `std` (default): the waveform [`record`]er. Without it the crate is
//!   `no_std`, allocation-free, and builds for `thumbv6m-none-eabi`.
//! * `coupled-physics` (default): coupled loops and saturation
//!   ([`Bench::set_magnetics`], [`Fault::ShortedTurns`]). Without it those
//!   are refused with [`SimError::InvalidParameter`] and their code is not
//!   linked (about 7 KiB of flash in a Cortex-M4F firmware).
//!
//! ## Injecting coil physics
//!
//! A valve with an eddy-current loop and saturation, 25 % of its turns then
//! bridged, pulsed with 5 % of its current left from the last pulse, read by
//! a converter with a −3 count offset and start latency:
//!
//! ```
//! use coilwise_host_tests::{
//!     demo, AdcConfig, Bench, CoupledLoop, Fault, Magnetics, Rig, Saturation, SolverSettings,
//!     Supply,
//! };
//!
//! let mut b = Bench::single(Supply::ideal(24.0), demo::valve_24v(), SolverSettings::default()).unwrap();
//! b.set_magnetics(0, Magnetics {
//!     eddy: Some(CoupledLoop { ohms: 4.0, henries: 0.007, coupling: 0.6 }),
//!     saturation: Some(Saturation::dropping(0.2, 0.3)), // −20 % at 0.3 A
//! }).unwrap();
//! b.inject(0, Fault::ShortedTurns { fraction: 0.25, coupling: 0.9, bridge_ohms: 0.5 }).unwrap();
//! b.set_current(0, 0.015).unwrap();
//! let e0 = b.energy(0).unwrap();
//! let rig = Rig::new(b);
//! rig.bench_mut().set_gate(0, true).unwrap();
//! let adc = AdcConfig::new(0.5).with_errors(-3.0, 0.005, 1.5, 7).with_start_delay(2_000, 3_000);
//! let mut sense = rig.adc(0, adc).unwrap();
//! let mut trace = [0u16; 64];
//! sense.capture(&mut trace, 50_000);
//! let b = rig.bench();
//! let p = b.probe(0).unwrap();
//! assert!(p.section_amps.abs() > 0.0 && p.eddy_amps.is_finite());
//! let e = b.energy(0).unwrap();
//! assert!(e.bridge > 0.0 && e.eddy > 0.0);
//! assert!(e.balance_error_since(&e0).abs() < 1e-6 * e.from_rail);
//! assert!(trace[63] > trace[0]);
//! ```
//!
//! ## Testing a driver against the plant
//!
//! A driver written against embedded-hal traits, pulsing a valve twice:
//!
//! ```
//! use coilwise_host_tests::{demo, Bench, Rig, SolverSettings, Supply};
//! use embedded_hal::delay::DelayNs;
//! use embedded_hal::digital::OutputPin;
//!
//! /// The code under test: two 40 ms pulses, 60 ms apart.
//! fn pulse_twice<P: OutputPin, D: DelayNs>(pin: &mut P, delay: &mut D) -> Result<(), P::Error> {
//!     for _ in 0..2 {
//!         pin.set_high()?;
//!         delay.delay_ms(40);
//!         pin.set_low()?;
//!         delay.delay_ms(60);
//!     }
//!     Ok(())
//! }
//!
//! let bench = Bench::single(Supply::ideal(24.0), demo::valve_24v(), SolverSettings::default()).unwrap();
//! let rig = Rig::new(bench);
//! rig.bench_mut().start_recording(20_000); // one sample each 20 µs
//! let mut pin = rig.gate(0).unwrap();
//! let mut clock = rig.clock();
//!
//! // Run the driver: pulses at t = 0 and t = 100 ms.
//! pulse_twice(&mut pin, &mut clock).unwrap();
//!
//! let b = rig.bench();
//! let stats = b.stats(0).unwrap();
//! // The switch never saw more than 30 V (24 V + one diode drop, clamped).
//! assert!(stats.peak_switch_volts < 30.0);
//! let rec = b.recording().unwrap();
//! // The armature operated in the first pulse and was back home before the
//! // second pulse at t = 100 ms.
//! assert!(rec.first_event(0, coilwise_host_tests::EventKind::ArmatureOperated, 0).unwrap() < 40_000_000);
//! assert!(rec.released_before(0, 100_000_000));
//! ```
#![cfg_attr(not(feature = "std"), no_std)]
#![forbid(unsafe_code)]
#![deny(missing_docs)]

mod bench;
pub mod demo;
mod energy;
mod fault;
mod hal;
pub mod magnetics;
mod node;
mod observe;
mod params;
mod plant;
#[cfg(feature = "std")]
pub mod record;
mod sense;
mod settings;

pub use bench::Bench;
pub use energy::{Energy, SupplyEnergy};
pub use fault::Fault;
pub use hal::{GatePin, PwmGate, Rig, SenseAdc, VirtualClock};
pub use magnetics::{CoupledLoop, Magnetics, Saturation};
pub use observe::{
    ArmatureState, ChannelStats, Comparator, Event, EventKind, Probe, SensePoint, SolverCounters,
};
pub use params::{
    Armature, ChannelParams, Clamp, Coil, DiodeLaw, Mechanics, SimError, Snubber, Supply, Switch,
    Topology, THERMAL_VOLTS_25C,
};
pub use sense::{AdcConfig, ComparatorErrors, Prng};
pub use settings::{SolverSettings, Stepping};
