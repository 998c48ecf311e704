//! Public-API robustness of the core: random calls into every public constructor and computation
//! with inputs that include NaN, ±∞, ±0, subnormals, f32::MAX and random sample buffers.
//!
//! Asserted for every call: no panic; no NaN or ∞ anywhere inside an `Ok` (or inside a verdict,
//! whose estimates are documented finite or `None`); the documented contracts — hold duty
//! 0 < D < 1 with ripple ≥ 0, times and energies ≥ 0, ticks rounded toward safety, and
//! `tick_budget()` refusing exactly what `budget()` refuses (and agreeing with it otherwise).
//!
//! Seeded and replayable: `COILWISE_API_SEED` (default 11) and `COILWISE_API_CALLS` (default
//! 100 000 here; CI runs 10⁷ in release mode). A failure re-runs the failing iteration with
//! every call and its inputs printed, then panics naming seed, iteration and the violation.
//!
//! The one place an ∞ is documented inside an `Ok`: [`Sampling::full_scale`] = ∞ for "no
//! saturation level". Its constructors are checked field by field instead of by the text scan.

use coilwise::diagnosis::{
    detect_movement, fit_rise, judge_actuation, judge_rise, judge_steady, judge_threshold,
    judge_trace, Conditions, Criteria, Expected, FitOptions, Movement, MovementCriteria, Probe,
    Sampling, SupplyReading, ThresholdBand, ThresholdReading,
};
use coilwise::physics::drive::{
    base_current, conduction_loss, recommended_base_resistor, saturation_loss,
};
use coilwise::physics::heating::{coil_dissipation, temperature_by_resistance};
use coilwise::physics::off_time::{min_off_time, OffTimeNeeds};
use coilwise::physics::rc_node::{inrush_peak, slew_rate, slew_time};
use coilwise::physics::repetition::{clamp_average_power, max_repetition_rate, min_period};
use coilwise::schedule::{
    ChannelId, ChannelLimits, EdgeBuffer, EnergyRate, HeatRating, HeatRatings, HoldDuty, HoldPhase,
    HoldPlan, Request, Scheduler, ThermalBucket,
};
use coilwise::*;
use std::collections::BTreeMap;
use std::fmt::Debug;
use std::panic::{catch_unwind, AssertUnwindSafe};
use std::sync::Mutex;

/// splitmix64: small, seedable, its whole state one `u64` (so an iteration can be replayed).
#[derive(Clone, Copy)]
struct Rng(u64);

impl Rng {
    fn next(&mut self) -> u64 {
        self.0 = self.0.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        z ^ (z >> 31)
    }
    /// Uniform in [0, 1).
    fn unit(&mut self) -> f32 {
        (self.next() >> 40) as f32 / (1u64 << 24) as f32
    }
    fn below(&mut self, n: u64) -> u64 {
        self.next() % n
    }
    fn chance(&mut self, p: f32) -> bool {
        self.unit() < p
    }
}

/// Values every f32 input must survive.
const NASTY: [f32; 18] = [
    f32::NAN,
    f32::INFINITY,
    f32::NEG_INFINITY,
    0.0,
    -0.0,
    f32::MIN_POSITIVE,
    -f32::MIN_POSITIVE,
    1.0e-40, // subnormal
    -1.0e-40,
    1.0e-45, // smallest subnormal
    f32::MAX,
    -f32::MAX,
    1.0e38,
    1.0e-38,
    f32::EPSILON,
    1.0,
    -1.0,
    3.0e38,
];

/// The generator: a seeded stream of inputs, the call count, and a verbose switch for replays.
struct Gen {
    rng: Rng,
    calls: u64,
    verbose: bool,
}

impl Gen {
    /// A nasty value or one of any sign and magnitude (10⁻⁴⁵ … 10³⁸·⁵).
    fn wild(&mut self) -> f32 {
        if self.rng.chance(0.5) {
            NASTY[self.rng.below(NASTY.len() as u64) as usize]
        } else {
            let e = -45.0 + 83.5 * self.rng.unit();
            let sign = if self.rng.chance(0.8) { 1.0 } else { -1.0 };
            sign * 10f32.powf(e)
        }
    }
    /// Mostly a plausible value near `typical` (×e^±2), sometimes a wild one.
    fn val(&mut self, typical: f32) -> f32 {
        if self.rng.chance(0.07) {
            self.wild()
        } else {
            typical * (4.0 * self.rng.unit() - 2.0).exp()
        }
    }
    /// Mostly `centre ± half`, sometimes wild (temperatures, factors, fractions).
    fn around(&mut self, centre: f32, half: f32) -> f32 {
        if self.rng.chance(0.07) {
            self.wild()
        } else {
            centre + half * (2.0 * self.rng.unit() - 1.0)
        }
    }
    fn volts(&mut self, typical: f32) -> Volts {
        Volts::new(self.val(typical))
    }
    fn ohms(&mut self, typical: f32) -> Ohms {
        Ohms::new(self.val(typical))
    }
    fn secs(&mut self, typical: f32) -> Seconds {
        Seconds::new(self.val(typical))
    }
    fn amps(&mut self, typical: f32) -> Amps {
        Amps::new(self.val(typical))
    }
    fn u32_any(&mut self) -> u32 {
        match self.rng.below(4) {
            0 => [0, 1, u32::MAX, u32::MAX - 1, 1 << 31][self.rng.below(5) as usize],
            1 => self.rng.below(1000) as u32,
            _ => self.rng.next() as u32,
        }
    }

    /// One call: counted, and with its inputs printed on a verbose replay.
    fn log(&mut self, name: &str, inputs: &dyn Debug) {
        self.calls += 1;
        if self.verbose {
            eprintln!("  call {name} {inputs:?}");
        }
    }
}

/// Fails when the Debug text of an accepted value holds a NaN or an infinity, a negative time
/// (`Seconds(-x)`) or a negative energy (`Joules(-x)`); -0.0 counts as zero.
fn scan(name: &str, v: &dyn Debug) -> Result<(), String> {
    let s = format!("{v:?}");
    let b = s.as_bytes();
    let word = |i: usize, len: usize| {
        let before = i == 0 || !b[i - 1].is_ascii_alphanumeric();
        let after = i + len >= b.len() || !b[i + len].is_ascii_alphanumeric();
        before && after
    };
    for pat in ["NaN", "inf"] {
        for (i, _) in s.match_indices(pat) {
            if word(i, pat.len()) {
                return Err(format!("{name}: non-finite value in {s}"));
            }
        }
    }
    for pat in ["Seconds(-", "Joules(-"] {
        for (i, _) in s.match_indices(pat) {
            let rest = &s[i + pat.len()..];
            if !rest.starts_with("0.0)") {
                return Err(format!("{name}: negative time or energy in {s}"));
            }
        }
    }
    Ok(())
}

/// How many results of each name were `Ok` and `Err` (to show the calls reach the `Ok` paths).
static TALLY: Mutex<BTreeMap<&'static str, [u64; 2]>> = Mutex::new(BTreeMap::new());

/// [`scan`] of an `Ok`; errors pass. Tallied.
fn ok<T: Debug, E>(name: &'static str, r: &Result<T, E>) -> Result<(), String> {
    if let Ok(mut t) = TALLY.lock() {
        t.entry(name).or_default()[r.is_err() as usize] += 1;
    }
    match r {
        Ok(v) => scan(name, v),
        Err(_) => Ok(()),
    }
}

fn ensure(cond: bool, what: impl FnOnce() -> String) -> Result<(), String> {
    if cond {
        Ok(())
    } else {
        Err(what())
    }
}

// ---- builders (each construction is a call of its own) ----

fn coil(g: &mut Gen) -> Result<Coil, Error> {
    let r = g.ohms(180.0);
    let t = Celsius::new(g.around(20.0, 60.0));
    let (l1, l2) = (Henries::new(g.val(0.3)), Henries::new(g.val(0.45)));
    let (vop, vrel) = (g.volts(16.8), g.volts(2.4));
    g.log("Coil::new", &(r, t, l1, l2, vop, vrel));
    let c = Coil::new(r, t, l1, l2, vop, vrel)?;
    if g.rng.chance(0.2) {
        let a = PerKelvin::new(g.val(0.004));
        g.log("Coil::with_temperature_coefficient", &a);
        return c.with_temperature_coefficient(a);
    }
    Ok(c)
}

fn switch(g: &mut Gen) -> Switch {
    if g.rng.chance(0.5) {
        Switch::Mosfet {
            on_resistance: g.ohms(0.1),
            breakdown: g.volts(60.0),
        }
    } else {
        Switch::Bipolar {
            saturation: g.volts(0.2),
            breakdown: g.volts(60.0),
        }
    }
}

fn clamp(g: &mut Gen) -> Result<Clamp, Error> {
    let vf = g.volts(0.8);
    match g.rng.below(6) {
        0 => {
            g.log("Clamp::diode", &vf);
            Clamp::diode(vf)
        }
        1 => {
            let vc = g.volts(30.0);
            g.log("Clamp::diode_zener", &(vf, vc));
            Clamp::diode_zener(vf, vc)
        }
        2 => {
            let r = g.ohms(200.0);
            g.log("Clamp::diode_resistor", &(vf, r));
            Clamp::diode_resistor(vf, r)
        }
        3 => {
            let (r, c) = (g.ohms(1000.0), Farads::new(g.val(1.0e-5)));
            g.log("Clamp::rc_snubber", &(r, c));
            Clamp::rc_snubber(r, c)
        }
        4 => {
            let c = Clamp::AcrossSwitch {
                clamp_voltage: g.volts(47.0),
            };
            g.log("Clamp::validate", &c);
            c.validate().map(|()| c)
        }
        _ => Ok(Clamp::Unclamped),
    }
}

fn circuit(g: &mut Gen) -> Result<Circuit, Error> {
    let coil = coil(g)?;
    let sw = switch(g);
    g.log("Switch::validate", &sw);
    sw.validate()?;
    let cl = clamp(g)?;
    let top = if g.rng.chance(0.5) {
        Topology::LowSide
    } else {
        Topology::HighSide
    };
    let (sense, wiring) = (g.ohms(0.5), g.ohms(0.4));
    g.log("Circuit::new", &(sw, top, sense, wiring, cl));
    Circuit::new(coil, sw, top, sense, wiring, cl)
}

fn point(g: &mut Gen) -> OperatingPoint {
    OperatingPoint {
        supply: g.volts(24.0),
        temperature: Celsius::new(g.around(20.0, 80.0)),
        resistance_factor: g.around(1.0, 0.2),
        inductance_factor: g.around(1.0, 0.2),
        sense_factor: g.around(1.0, 0.05),
    }
}

fn design(g: &mut Gen) -> Result<DriverDesign, Error> {
    let c = circuit(g)?;
    let nominal = g.val(24.0);
    let tol = g.around(0.1, 0.1);
    g.log("SupplyRange::with_tolerance", &(nominal, tol));
    let supply = SupplyRange::with_tolerance(Volts::new(nominal), tol)?;
    let (lo, hi) = (g.around(-20.0, 40.0), g.around(60.0, 40.0));
    g.log("TemperatureRange::new", &(lo, hi));
    let temp = TemperatureRange::new(Celsius::new(lo), Celsius::new(hi))?;
    let hz = [1_000, 32_768, 1_000_000, 80_000_000, 1, u32::MAX][g.rng.below(6) as usize];
    g.log("TickRate::new", &hz);
    let rate = TickRate::new(hz)?;
    let mut d = DriverDesign::new(c, supply, temp, rate);
    d.tolerances = Tolerances {
        resistance: g.around(0.05, 0.05),
        inductance: g.around(0.1, 0.1),
        sense: g.around(0.01, 0.01),
    };
    d.operate_allowance = g.secs(5.0e-3);
    d.release_allowance = g.secs(5.0e-3);
    d.residual_current = Amps::new(if g.rng.chance(0.5) {
        0.0
    } else {
        g.val(1.0e-3)
    });
    if g.rng.chance(0.5) {
        d.duty = Some((g.secs(0.05), Hertz::new(g.val(2.0))));
    }
    if g.rng.chance(0.5) {
        d.clamp_rating = Some(Watts::new(g.val(0.25)));
    }
    Ok(d)
}

// ---- families of calls ----

fn fam_time(g: &mut Gen) -> Result<(), String> {
    let hz = g.u32_any();
    g.log("TickRate::new", &hz);
    let Ok(rate) = TickRate::new(hz) else {
        return ensure(hz == 0, || format!("TickRate::new({hz}) refused"));
    };
    scan("TickRate::as_hertz", &rate.as_hertz())?;
    for _ in 0..4 {
        let t = Seconds::new(if g.rng.chance(0.5) {
            g.val(1e-3)
        } else {
            g.wild()
        });
        g.log("TickRate::ticks_at_least", &(hz, t));
        if let Ok(n) = rate.ticks_at_least(t) {
            // Rounded up: n/rate ≥ t (exact in f64).
            ensure(n.get() as f64 / hz as f64 >= t.value() as f64, || {
                format!("ticks_at_least({t:?}) at {hz} Hz = {n:?} is short")
            })?;
        }
        g.log("TickRate::ticks_at_most", &(hz, t));
        if let Ok(n) = rate.ticks_at_most(t) {
            ensure(n.get() as f64 / hz as f64 <= t.value() as f64, || {
                format!("ticks_at_most({t:?}) at {hz} Hz = {n:?} is long")
            })?;
        }
        let n = Ticks(g.u32_any());
        g.log("TickRate::seconds", &(hz, n));
        let s = rate.seconds(n);
        scan("TickRate::seconds", &s)?;
        let (a, b) = (Instant(g.u32_any()), Ticks(g.u32_any()));
        g.log("Instant::after/since", &(a, b));
        let later = a.after(b);
        let _ = (later.since(a), later.is_at_or_after(a), a.latest(later));
        let _ = (n.checked_add(b), n.max(b));
    }
    Ok(())
}

fn fam_coil(g: &mut Gen) -> Result<(), String> {
    let c = coil(g);
    ok("Coil::new", &c)?;
    if let Ok(c) = c {
        for i in [c.pull_in_current(), c.drop_out_current()] {
            ensure(i.value().is_finite() && i.value() > 0.0, || {
                format!("coil currents not finite/positive: {c:?}")
            })?;
        }
        let t = Celsius::new(g.around(20.0, 150.0));
        g.log("Coil::resistance_at", &t);
        ok("Coil::resistance_at", &c.resistance_at(t))?;
        let r = g.ohms(200.0);
        g.log("Coil::temperature_from_resistance", &r);
        ok(
            "Coil::temperature_from_resistance",
            &c.temperature_from_resistance(r),
        )?;
    }
    let (r1, t1, r2) = (
        g.ohms(180.0),
        Celsius::new(g.around(20.0, 50.0)),
        g.ohms(220.0),
    );
    g.log("temperature_by_resistance", &(r1, t1, r2));
    ok(
        "temperature_by_resistance",
        &temperature_by_resistance(r1, t1, r2),
    )?;
    let (i, r, d) = (g.amps(0.1), g.ohms(180.0), g.around(0.5, 0.6));
    g.log("coil_dissipation", &(i, r, d));
    ok("coil_dissipation", &coil_dissipation(i, r, d))?;
    let (lo, nom, hi) = (g.volts(20.0), g.volts(24.0), g.volts(28.0));
    g.log("SupplyRange::new", &(lo, nom, hi));
    ok("SupplyRange::new", &SupplyRange::new(lo, nom, hi))?;
    let t = Tolerances {
        resistance: g.around(0.1, 0.9),
        inductance: g.around(0.1, 0.9),
        sense: g.around(0.1, 0.9),
    };
    g.log("Tolerances::validate", &t);
    let _ = t.validate();
    Ok(())
}

fn hold_contract(name: &str, h: &Hold) -> Result<(), String> {
    scan(name, h)?;
    ensure(h.duty > 0.0 && h.duty < 1.0, || {
        format!("{name}: duty {h:?}")
    })?;
    ensure(h.ripple.value() >= 0.0, || format!("{name}: ripple {h:?}"))?;
    ensure(h.valley.value() >= 0.0 && h.valley <= h.peak, || {
        format!("{name}: valley/peak {h:?}")
    })?;
    ensure(
        h.winding_power.value() >= 0.0 && h.clamp_power.value() >= 0.0,
        || format!("{name}: power {h:?}"),
    )
}

fn fam_circuit(g: &mut Gen) -> Result<(), String> {
    let c = circuit(g);
    ok("Circuit::new", &c)?;
    let Ok(c) = c else { return Ok(()) };
    let op = point(g);
    g.log("Circuit::resolve", &op);
    ok("Circuit::resolve", &c.resolve(&op))?;
    g.log("Circuit::final_current", &op);
    let i_final = c.final_current(&op);
    ok("Circuit::final_current", &i_final)?;
    g.log("Circuit::pull_in_time", &op);
    ok("Circuit::pull_in_time", &c.pull_in_time(&op))?;
    g.log("Circuit::pull_in_margin", &op);
    ok("Circuit::pull_in_margin", &c.pull_in_margin(&op))?;
    let i0 = if g.rng.chance(0.3) { g.wild() } else { 0.0 };
    g.log("Circuit::energize", &(op, i0));
    let e = c.energize(&op, Armature::Released, Amps::new(i0));
    ok("Circuit::energize", &e)?;
    if let Ok(e) = e {
        let t = g.secs(1e-2);
        g.log("FirstOrder::value_at/integral_to", &t);
        ok("FirstOrder::value_at", &e.value_at(t))?;
        ok("FirstOrder::integral_to", &e.integral_to(t))?;
        let target = g.val(0.05);
        g.log("FirstOrder::time_to", &target);
        ok("FirstOrder::time_to", &e.time_to(target))?;
    }
    let start = match i_final {
        Ok(i) if g.rng.chance(0.8) => i,
        _ => g.amps(0.1),
    };
    g.log("Circuit::release", &(op, start));
    let rel = c.release(&op, start);
    ok("Circuit::release", &rel)?;
    if let Ok(rel) = rel {
        let t = g.secs(1e-2);
        g.log("Release::current_at/switch_voltage_at", &t);
        ok("Release::current_at", &rel.current_at(t))?;
        ok("Release::switch_voltage_at", &rel.switch_voltage_at(t))?;
        let target = g.amps(0.01);
        g.log("Release::time_to_current/settle_time", &target);
        ok("Release::time_to_current", &rel.time_to_current(target))?;
        ok("Release::settle_time", &rel.settle_time(target))?;
        g.log("Release::time_to_zero/energy", &());
        ok("Release::time_to_zero", &rel.time_to_zero())?;
        ok("Release::energy", &rel.energy())?;
        scan(
            "Release::peak",
            &(rel.peak_switch_voltage(), rel.peak_node_voltage()),
        )?;
        let node = Farads::new(g.val(1e-10));
        g.log("Release::switch_off_edge", &node);
        ok("Release::switch_off_edge", &rel.switch_off_edge(node))?;
        let needs = OffTimeNeeds {
            residual_current: g.amps(1e-3),
            mechanical_release: g.secs(5e-3),
            clamp_thermal: if g.rng.chance(0.5) {
                Some((Watts::new(g.val(0.25)), g.secs(0.05)))
            } else {
                None
            },
        };
        let drop = g.amps(0.013);
        g.log("min_off_time", &(drop, needs));
        ok("min_off_time", &min_off_time(&rel, drop, &needs))?;
        if let Some(s) = rel.snubber() {
            let t = g.secs(1e-2);
            g.log("SnubberRelease::*", &t);
            ok("SnubberRelease::current_at", &s.current_at(t))?;
            ok(
                "SnubberRelease::capacitor_voltage_at",
                &s.capacitor_voltage_at(t),
            )?;
            ok(
                "SnubberRelease::reverse_voltage_at",
                &s.reverse_voltage_at(t),
            )?;
            ok("SnubberRelease::slope_at", &s.slope_at(t))?;
            ok("SnubberRelease::time_to_rest", &s.time_to_rest())?;
            ok("SnubberRelease::time_to_current", &s.time_to_current(drop))?;
            ok("SnubberRelease::settle_time", &s.settle_time(drop))?;
            scan(
                "SnubberRelease::figures",
                &(
                    s.damping_ratio(),
                    s.slow_time_constant(),
                    s.fast_time_constant(),
                    s.peak_reverse_voltage(),
                    s.reverse_current_peak(),
                    s.energy(),
                    s.initial_slope(),
                ),
            )?;
        }
    }
    let (ih, f) = (g.amps(0.05), Hertz::new(g.val(20_000.0)));
    g.log("Circuit::hold", &(op, ih, f));
    if let Ok(h) = c.hold(&op, ih, f) {
        hold_contract("Circuit::hold", &h)?;
    }
    let d = g.around(0.5, 0.6);
    g.log("Circuit::coil_dissipation/switch_loss", &(op, d));
    ok("Circuit::coil_dissipation", &c.coil_dissipation(&op, d))?;
    ok("Circuit::switch_loss", &c.switch_loss(&op, d))?;
    let (amb, rth) = (
        Celsius::new(g.around(25.0, 40.0)),
        KelvinPerWatt::new(g.val(40.0)),
    );
    g.log("Circuit::self_heating", &(op, amb, rth, d));
    ok("Circuit::self_heating", &c.self_heating(&op, amb, rth, d))?;
    Ok(())
}

fn fam_parts(g: &mut Gen) -> Result<(), String> {
    let (v, vbe, rb) = (g.volts(5.0), g.volts(0.7), g.ohms(1000.0));
    g.log("base_current", &(v, vbe, rb));
    ok("base_current", &base_current(v, vbe, rb))?;
    let (ic, h, k) = (g.amps(0.1), g.val(100.0), g.val(2.0));
    g.log("recommended_base_resistor", &(ic, v, vbe, h, k));
    ok(
        "recommended_base_resistor",
        &recommended_base_resistor(ic, v, vbe, h, k),
    )?;
    let bd = BaseDrive {
        drive: v,
        base_emitter: vbe,
        base_resistor: rb,
        min_gain: h,
    };
    g.log("check_bipolar", &(ic, bd, k));
    ok("check_bipolar", &check_bipolar(ic, &bd, k))?;
    let (r, d) = (g.ohms(0.1), g.around(0.5, 0.6));
    g.log("conduction_loss/saturation_loss", &(ic, r, d));
    ok("conduction_loss", &conduction_loss(ic, r, d))?;
    ok("saturation_loss", &saturation_loss(ic, g.volts(0.2), d))?;
    let gd = GateDrive {
        gate_voltage: g.volts(10.0),
        rated_gate_voltage: g.volts(10.0),
        on_resistance: r,
    };
    g.log("check_mosfet", &(ic, d, gd));
    ok("check_mosfet", &check_mosfet(ic, d, &gd))?;
    let (a, b, tau) = (g.wild(), g.val(1.0), g.secs(1e-3));
    g.log("FirstOrder::new", &(a, b, tau));
    let fo = FirstOrder::new(a, b, tau);
    ok("FirstOrder::new", &fo)?;
    if let Ok(fo) = fo {
        let t = Seconds::new(g.wild());
        g.log("FirstOrder::*", &t);
        ok("FirstOrder::value_at", &fo.value_at(t))?;
        ok("FirstOrder::integral_to", &fo.integral_to(t))?;
        ok("FirstOrder::time_to", &fo.time_to(g.wild()))?;
    }
    let (rn, cn) = (g.ohms(1000.0), Farads::new(g.val(1e-6)));
    g.log("RcNode::new", &(rn, cn));
    let node = RcNode::new(rn, cn);
    ok("RcNode::new", &node)?;
    if let Ok(n) = node {
        let (from, to, th) = (g.volts(0.0), g.volts(5.0), g.volts(2.5));
        g.log("RcNode::*", &(from, to, th));
        scan("RcNode::tau/settling", &(n.tau(), n.settling_time()))?;
        ok("RcNode::step", &n.step(from, to))?;
        ok("RcNode::time_to", &n.time_to(from, to, th))?;
        ok(
            "RcNode::settling_time_within",
            &n.settling_time_within(g.val(0.01)),
        )?;
        ok("RcNode::inrush_peak", &n.inrush_peak(from, to))?;
        ok("RcNode::step_loss", &n.step_loss(from, to))?;
    }
    let (i, c, sw) = (g.amps(0.1), Farads::new(g.val(1e-10)), g.volts(50.0));
    g.log("inrush_peak/slew_rate/slew_time", &(sw, rn, i, c));
    ok("inrush_peak", &inrush_peak(sw, rn))?;
    ok("slew_rate", &slew_rate(i, c))?;
    ok("slew_time", &slew_time(i, c, sw))?;
    let (e, f, p) = (
        Joules::new(g.val(4e-3)),
        Hertz::new(g.val(2.0)),
        Watts::new(g.val(0.25)),
    );
    g.log("repetition", &(e, f, p));
    ok("clamp_average_power", &clamp_average_power(e, f))?;
    ok("max_repetition_rate", &max_repetition_rate(e, p))?;
    ok("min_period", &min_period(e, p))?;
    let sn = (
        Henries::new(g.val(0.45)),
        g.ohms(180.0),
        g.ohms(1000.0),
        Farads::new(g.val(1e-5)),
        g.amps(0.13),
        g.volts(24.0),
    );
    g.log("SnubberRelease::new", &sn);
    ok(
        "SnubberRelease::new",
        &SnubberRelease::new(sn.0, sn.1, sn.2, sn.3, sn.4, sn.5),
    )?;
    Ok(())
}

fn fam_design(g: &mut Gen) -> Result<(), String> {
    let Ok(d) = design(g) else { return Ok(()) };
    g.log("DriverDesign::validate", &d);
    let _ = d.validate();
    g.log("DriverDesign::budget/tick_budget", &());
    let (full, ticks) = (d.budget(), d.tick_budget());
    ok("DriverDesign::budget", &full)?;
    match (&full, &ticks) {
        (Ok(b), Ok(t)) => ensure(&b.ticks == t, || {
            format!("tick_budget {t:?} differs from budget {:?}", b.ticks)
        })?,
        (Err(_), Err(_)) => {}
        _ => {
            return Err(format!(
                "budget and tick_budget disagree: {:?} vs {ticks:?}",
                full.as_ref().map(|b| b.ticks)
            ))
        }
    }
    if let Ok(b) = &full {
        ensure(
            b.min_on_time.value() >= 0.0
                && b.min_off_time >= b.release_corner.off_time.required
                && b.min_off_time >= b.nominal.off_time.required,
            || format!("budget contract: {b:?}"),
        )?;
    }
    let k = g.rng.below(34) as u32;
    g.log("DriverDesign::corner/figures", &k);
    if let Some(op) = d.corner(k) {
        ok("DriverDesign::figures", &d.figures(&op))?;
        ok("DriverDesign::coil_power", &d.coil_power(&op))?;
    }
    g.log("DriverDesign::worst_release", &());
    ok("DriverDesign::worst_release", &d.worst_release())?;
    let (ih, f) = (g.amps(0.05), Hertz::new(g.val(20_000.0)));
    g.log("DriverDesign::hold_at_corners", &(ih, f));
    if let Ok(hs) = d.hold_at_corners(ih, f) {
        ensure(d.validate().is_ok(), || {
            "hold_at_corners accepted an invalid design".to_string()
        })?;
        for h in &hs {
            hold_contract("DriverDesign::hold_at_corners", h)?;
        }
    }
    let heat = HeatRatings {
        clamp: g.rng.chance(0.5).then(|| HeatRating {
            power: Watts::new(g.val(0.5)),
            time_constant: g.secs(10.0),
        }),
        coil: g.rng.chance(0.5).then(|| HeatRating {
            power: Watts::new(g.val(2.0)),
            time_constant: g.secs(60.0),
        }),
    };
    let plan = g.rng.chance(0.5).then_some(HoldPlan {
        current: ih,
        frequency: f,
    });
    g.log("ChannelLimits::from_design", &(heat, plan));
    let _ = ChannelLimits::from_design(&d, &heat, plan);
    Ok(())
}

/// A trace of `n` samples: a first-order rise (with a dip, noise, offset or saturation), random
/// garbage, or nasty values.
fn trace(g: &mut Gen, n: usize, top: f32) -> Vec<f32> {
    let kind = g.rng.below(4);
    let tau = 5.0 + 40.0 * g.rng.unit();
    let noise = 3.0 * g.rng.unit();
    let dip = g.rng.chance(0.5);
    (0..n)
        .map(|k| match kind {
            0 | 1 => {
                let k = k as f32;
                let mut x = top * 0.8 * (1.0 - (-k / tau).exp());
                if dip && k > 2.0 * tau && k < 3.0 * tau {
                    x -= 0.1 * top * ((k - 2.0 * tau) / tau * std::f32::consts::PI).sin();
                }
                x + noise * (g.rng.unit() - 0.5)
            }
            2 => top * g.rng.unit(),
            _ => {
                if g.rng.chance(0.3) {
                    g.wild()
                } else {
                    top * g.rng.unit()
                }
            }
        })
        .collect()
}

/// A sampling from random settings: `Ok(None)` when refused, `Err` for an accepted one with a
/// non-finite field (full scale may be +∞: "no saturation"; the period must be > 0).
fn sampling(g: &mut Gen) -> Result<Option<Sampling>, String> {
    let Ok(s) = try_sampling(g) else {
        return Ok(None);
    };
    let fields = [
        s.period().value(),
        s.first().value(),
        s.amps_per_count(),
        s.zero(),
        s.noise(),
    ];
    if fields.iter().any(|x| !x.is_finite()) || s.full_scale().is_nan() || s.period().value() <= 0.0
    {
        return Err(format!("Sampling accepted a non-finite field: {s:?}"));
    }
    Ok(Some(s))
}

fn try_sampling(g: &mut Gen) -> Result<Sampling, Error> {
    let period = g.secs(1e-4);
    let mut s = if g.rng.chance(0.5) {
        let bits = g.rng.below(27) as u8;
        let fs = g.amps(0.4);
        g.log("Sampling::adc", &(period, bits, fs));
        Sampling::adc(period, bits, fs)?
    } else {
        let apc = g.val(1e-4);
        g.log("Sampling::new", &(period, apc));
        Sampling::new(period, apc)?
    };
    if g.rng.chance(0.3) {
        let first = g.secs(1e-4);
        g.log("Sampling::with_first_sample", &first);
        s = s.with_first_sample(first)?;
    }
    if g.rng.chance(0.3) {
        let z = g.around(0.0, 20.0);
        g.log("Sampling::with_zero", &z);
        s = s.with_zero(z)?;
    }
    if g.rng.chance(0.3) {
        let fs = g.val(4000.0);
        g.log("Sampling::with_full_scale", &fs);
        s = s.with_full_scale(fs)?;
    }
    if g.rng.chance(0.3) {
        let n = g.val(1.0);
        g.log("Sampling::with_noise", &n);
        s = s.with_noise(n)?;
    }
    Ok(s)
}

fn fam_diagnosis(g: &mut Gen) -> Result<(), String> {
    let Ok(d) = design(g) else { return Ok(()) };
    let conditions = Conditions {
        supply: if g.rng.chance(0.5) {
            let (v, acc) = (g.volts(24.0), g.around(0.02, 0.02));
            g.log("SupplyReading::new", &(v, acc));
            SupplyReading::new(v, acc).ok()
        } else {
            None
        },
        winding_temperature: if g.rng.chance(0.5) {
            let (lo, hi) = (g.around(20.0, 30.0), g.around(30.0, 30.0));
            TemperatureRange::new(Celsius::new(lo), Celsius::new(hi)).ok()
        } else {
            None
        },
    };
    g.log("Expected::new", &conditions);
    let expected = Expected::new(&d, &conditions);
    ok("Expected::new", &expected)?;
    let th = g.amps(0.05);
    g.log("ThresholdBand::new", &th);
    let band = ThresholdBand::new(&d, &conditions, th);
    ok("ThresholdBand::new", &band)?;
    let fraction = g.around(0.5, 0.5);
    g.log("Probe::new", &fraction);
    let probe = Probe::new(&d, fraction);
    ok("Probe::new", &probe)?;
    let Some(s) = sampling(g)? else {
        return Ok(());
    };
    let n = [0usize, 1, 2, 3, 8, 40, 200][g.rng.below(7) as usize];
    let raw = trace(g, n, 4000.0);
    let counts: Vec<u16> = raw.iter().map(|&x| x as u16).collect();
    let mut options = FitOptions::default();
    options = options.with_refinements(g.rng.below(6) as u8);
    let mut criteria = Criteria::default();
    if g.rng.chance(0.2) {
        criteria.sigmas = g.wild();
        criteria.model_margin = g.around(0.01, 0.02);
    }
    let mut movement = MovementCriteria::default();
    if g.rng.chance(0.2) {
        movement.sigmas = g.wild();
        movement.min_depth = g.wild();
    }
    g.log("fit_rise/detect_movement", &(s, n, &raw, options, movement));
    let fit_f = fit_rise(&raw, &s, &options);
    ok("fit_rise(f32)", &fit_f)?;
    let fit_u = fit_rise(&counts, &s, &options);
    ok("fit_rise(u16)", &fit_u)?;
    let m = detect_movement(&raw, &s, &movement);
    ok("detect_movement(f32)", &m)?;
    if let Ok(Movement::Moved {
        at, seated, depth, ..
    }) = m
    {
        ensure(seated >= at && depth.value() >= 0.0, || {
            format!("movement {m:?}")
        })?;
    }
    ok(
        "detect_movement(u16)",
        &detect_movement(&counts, &s, &movement),
    )?;
    let Ok(expected) = expected else {
        return Ok(());
    };
    g.log("judge_trace/judge_actuation", &criteria);
    scan(
        "judge_trace(f32)",
        &judge_trace(&raw, &s, &expected, &criteria, &options),
    )?;
    scan(
        "judge_trace(u16)",
        &judge_trace(&counts, &s, &expected, &criteria, &options),
    )?;
    scan(
        "judge_actuation(u16)",
        &judge_actuation(&counts, &s, &expected, &criteria, &options),
    )?;
    if let Ok(fit) = fit_u {
        g.log("judge_rise", &fit);
        scan("judge_rise", &judge_rise(&fit, &expected, &criteria))?;
    }
    let steady = g.amps(0.1);
    g.log("judge_steady", &steady);
    scan("judge_steady", &judge_steady(steady, &expected, &criteria))?;
    if let Ok(band) = band {
        let (on, cross, now) = (
            Instant(g.u32_any()),
            Instant(g.u32_any()),
            Instant(g.u32_any()),
        );
        let cross = g.rng.chance(0.5).then_some(cross);
        g.log("ThresholdReading::from_instants", &(on, cross, now));
        if let Ok(reading) = ThresholdReading::from_instants(d.tick_rate, on, cross, now) {
            scan("ThresholdReading", &reading)?;
            let steady = g.rng.chance(0.5).then_some(steady);
            g.log("judge_threshold", &(reading, steady));
            scan(
                "judge_threshold",
                &judge_threshold(reading, &band, steady, &expected, &criteria),
            )?;
        }
    }
    if let Ok(p) = probe {
        let k = g.rng.below(300) as usize;
        g.log("Probe::sample_period/judge", &k);
        ok("Probe::sample_period", &p.sample_period(k))?;
        scan(
            "Probe::judge",
            &p.judge(&counts, &s, &expected, &criteria, &options),
        )?;
    }
    Ok(())
}

fn fam_schedule(g: &mut Gen) -> Result<(), String> {
    let x = g.around(0.5, 0.6);
    g.log("HoldDuty::from_fraction", &x);
    let duty = HoldDuty::from_fraction(x);
    if let Ok(d) = duty {
        scan("HoldDuty::fraction", &d.fraction())?;
    }
    let rate = TickRate::new(1 + g.rng.below(80_000_000) as u32).unwrap();
    let p = Watts::new(g.val(1.0));
    g.log("EnergyRate::from_watts", &(p, rate));
    let _ = EnergyRate::from_watts(p, rate);
    let tc = g.secs(10.0);
    g.log("ThermalBucket::from_rating", &(p, tc, rate));
    let bucket = ThermalBucket::from_rating(p, tc, rate);
    let mut limits = [ChannelLimits::new(Ticks(10), Ticks(10)).unwrap(); 3];
    for l in limits.iter_mut() {
        let (on, off) = (Ticks(g.u32_any() % 5000), Ticks(g.u32_any() % 5000));
        g.log("ChannelLimits::new", &(on, off));
        let Ok(mut c) = ChannelLimits::new(on, off) else {
            continue;
        };
        if g.rng.chance(0.3) {
            let m = Ticks(g.u32_any() % 20_000);
            g.log("ChannelLimits::with_max_on", &m);
            c = c.with_max_on(m).unwrap_or(c);
        }
        if g.rng.chance(0.3) {
            let w = Ticks(g.u32_any() % 5000);
            g.log("ChannelLimits::with_inrush_window", &w);
            c = c.with_inrush_window(w).unwrap_or(c);
        }
        if let (true, Ok(d)) = (g.rng.chance(0.3), duty) {
            let after = Ticks(g.u32_any() % 5000);
            g.log("HoldPhase::new/with_hold", &(after, d));
            if let Ok(h) = HoldPhase::new(after, d) {
                c = c.with_hold(h).unwrap_or(c);
            }
        }
        if let (true, Ok(b)) = (g.rng.chance(0.3), bucket) {
            let pp = g.u32_any() % 100_000;
            g.log("ChannelLimits::with_clamp_heat", &pp);
            c = c.with_clamp_heat(b.with_per_pulse(pp)).unwrap_or(c);
        }
        *l = c;
    }
    let cap = g.rng.below(4) as u8;
    let start = Instant(g.u32_any());
    g.log("Scheduler::new", &(cap, start));
    let Ok(mut s) = Scheduler::<3, 8>::new(limits, cap, start) else {
        return Ok(());
    };
    let mut now = start;
    let mut edges = EdgeBuffer::<4>::new();
    for _ in 0..12 {
        now = now.after(Ticks(g.u32_any() % 3000));
        if g.rng.chance(0.05) {
            now = Instant(g.u32_any()); // also backwards
        }
        let ch = ChannelId(g.rng.below(4) as u8);
        match g.rng.below(4) {
            0 | 1 => {
                let dur = Ticks(g.u32_any() % 8000);
                let req = if g.rng.chance(0.5) {
                    Request::now(ch, dur)
                } else {
                    Request::at(ch, dur, now.after(Ticks(g.u32_any() % 4000)))
                        .within(Ticks(g.u32_any() % 4000))
                };
                g.log("Scheduler::submit", &(now, req));
                let _ = s.submit(now, req);
            }
            2 => {
                edges.clear();
                g.log("Scheduler::poll", &now);
                let _ = s.poll(now, &mut edges);
                let _ = s.next_wake();
            }
            _ => {
                g.log("Scheduler::stop", &(now, ch));
                let _ = s.stop(now, ch);
                if let Ok(d) = duty {
                    let _ = s.set_hold_duty(ch, d);
                }
                let _ = (s.heat(ch), s.pending(), s.now());
            }
        }
    }
    Ok(())
}

type Family = fn(&mut Gen) -> Result<(), String>;

const FAMILIES: [(&str, Family); 7] = [
    ("time", fam_time),
    ("coil", fam_coil),
    ("circuit", fam_circuit),
    ("parts", fam_parts),
    ("design", fam_design),
    ("diagnosis", fam_diagnosis),
    ("schedule", fam_schedule),
];

fn env_u64(name: &str, default: u64) -> u64 {
    std::env::var(name)
        .ok()
        .and_then(|v| v.trim().parse().ok())
        .unwrap_or(default)
}

#[test]
fn random_calls_into_every_public_api() {
    let seed = env_u64("COILWISE_API_SEED", 11);
    let target = env_u64("COILWISE_API_CALLS", 100_000);
    let mut g = Gen {
        rng: Rng(seed),
        calls: 0,
        verbose: false,
    };
    let started = std::time::Instant::now();
    let mut per_family = [0u64; FAMILIES.len()];
    let mut iteration = 0u64;
    while g.calls < target {
        let state = g.rng;
        let (name, family) = FAMILIES[(iteration % FAMILIES.len() as u64) as usize];
        let before = g.calls;
        let outcome = catch_unwind(AssertUnwindSafe(|| family(&mut g)));
        per_family[(iteration % FAMILIES.len() as u64) as usize] += g.calls - before;
        let failure = match outcome {
            Ok(Ok(())) => None,
            Ok(Err(msg)) => Some(msg),
            Err(_) => Some("panicked (message above)".to_string()),
        };
        if let Some(msg) = failure {
            eprintln!("replaying seed {seed} iteration {iteration} ({name}) with its inputs:");
            let mut replay = Gen {
                rng: state,
                calls: 0,
                verbose: true,
            };
            let _ = catch_unwind(AssertUnwindSafe(|| family(&mut replay)));
            panic!("seed {seed} iteration {iteration} family {name}: {msg}");
        }
        iteration += 1;
    }
    let tally = TALLY.lock().map(|t| t.clone()).unwrap_or_default();
    for (name, [good, bad]) in &tally {
        eprintln!("  {name:<40} ok {good:>9}  err {bad:>9}");
    }
    // The accepted paths are reached, not only the refusals (checked for the main results).
    if target >= 20_000 {
        for name in [
            "DriverDesign::budget",
            "DriverDesign::figures",
            "Circuit::release",
            "Release::energy",
            "Circuit::self_heating",
            "Expected::new",
            "fit_rise(u16)",
            "detect_movement(f32)",
            "Probe::new",
            "min_off_time",
        ] {
            let n = tally.get(name).map_or(0, |t| t[0]);
            assert!(n > 0, "{name} never returned Ok in {target} calls");
        }
    }
    eprintln!(
        "{} calls ({} iterations, seed {seed}) in {:.1} s; per family: {:?}",
        g.calls,
        iteration,
        started.elapsed().as_secs_f64(),
        FAMILIES
            .iter()
            .map(|f| f.0)
            .zip(per_family)
            .collect::<Vec<_>>()
    );
}
