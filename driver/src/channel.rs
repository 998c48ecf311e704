//! A channel: its hardware ([`ChannelHw`]), what the driver knows of it ([`ChannelConfig`]),
//! and what it reports about it ([`Status`]).
//!
//! A configuration is built either from a [`DriverDesign`] ([`ChannelConfig::from_design`]:
//! scheduler limits, healthy bands and the diagnostic pulse, all from the physics), or from
//! scheduler limits alone ([`ChannelConfig::from_limits`]) — for example from the tick constants
//! the design tool generates, on a part without an FPU where the designs are not evaluated on
//! the device. Without a design the channel is scheduled just as safely, but not diagnosed:
//! no diagnostic pulse, no rise capture, no findings.

use coilwise::diagnosis::{Conditions, Criteria, Expected, Finding, Probe, ThresholdBand, Verdict};
use coilwise::schedule::{ChannelLimits, HeatRatings, HoldPlan};
use coilwise::{Amps, DriverDesign, Instant, Ticks};

use crate::error::{ErrorKind, SetupError};
use crate::event::ProbePurpose;
use crate::request::Pulse;

/// Samples the driver's capture buffer holds (one rise or one diagnostic pulse at a time).
pub const SAMPLES: usize = 64;

/// One coil channel's hardware: drive switch, hold PWM, current sense. The driver owns it and
/// gives it back on [`crate::Driver::free`].
///
/// `switch` and `hold` drive the same transistor: while the hold PWM has a non-zero duty it
/// drives the switch (a timer channel in PWM mode); at duty 0 the switch follows `switch` (the
/// same channel forced active or inactive). On a real part both are usually one timer output; a
/// board whose switch and PWM are separate pins ORs them in hardware.
#[derive(Debug)]
pub struct ChannelHw<Sw, Pwm, Sense> {
    /// Low-side switch (`set_high` = coil energised at full drive).
    pub switch: Sw,
    /// Hold PWM on the same switch path (economiser); duty 0 when unused.
    pub hold: Pwm,
    /// Current sense of this coil.
    pub sense: Sense,
}

impl<Sw, Pwm, Sense> ChannelHw<Sw, Pwm, Sense> {
    /// Bundles the three parts of a channel.
    pub const fn new(switch: Sw, hold: Pwm, sense: Sense) -> Self {
        Self {
            switch,
            hold,
            sense,
        }
    }
}

/// How a channel built from a design is used (the parts a design file does not say).
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
#[non_exhaustive]
pub struct ChannelOptions {
    /// Channels with the same group share a supply rail: a low supply seen on one holds back all
    /// of them. Must be below the number of channels.
    pub supply_group: u8,
    /// Peak-and-hold economiser (`None`: full drive for the whole pulse).
    pub hold: Option<HoldPlan>,
    /// Thermal ratings the scheduler budgets for.
    pub heat: HeatRatings,
    /// Sample period of the rise capture of a real pulse, ticks (> 0). With [`SAMPLES`] samples
    /// the capture should span a few time constants of the coil.
    pub rise_period: Ticks,
    /// Converter noise the diagnosis assumes, counts RMS (quantisation excluded).
    pub noise_counts: f32,
    /// The diagnostic pulse stays below this fraction of the pull-in current at every corner
    /// (0 < f < 1; 0.5 is common practice, no source).
    pub probe_fraction: f32,
    /// The comparator trips at this fraction of the pull-in current (0 < f < 1).
    pub trip_fraction: f32,
    /// Verdict criteria, which carry the coil's declared build: `None` is
    /// [`Criteria::default`], the conservative declaration (a solid eddy-current path of up to
    /// 5 % of the current, saturation up to −25 % of L), under which a diagnostic pulse cannot
    /// name a resistance fault; [`Criteria::laminated`] for a laminated core with no solid
    /// conducting part gets resistance sensitivity back (`docs/diagnosis.md` §9).
    pub criteria: Option<Criteria>,
}

impl ChannelOptions {
    /// Options with the rise sampled every `rise_period` ticks: supply group 0, no economiser,
    /// no thermal rating, 0.6 counts of noise, probe and comparator at half the pull-in current.
    pub const fn new(rise_period: Ticks) -> Self {
        Self {
            supply_group: 0,
            hold: None,
            heat: HeatRatings {
                clamp: None,
                coil: None,
            },
            rise_period,
            noise_counts: 0.6,
            probe_fraction: 0.5,
            trip_fraction: 0.5,
            criteria: None,
        }
    }

    /// The same options with these verdict criteria (the coil's declared build).
    pub const fn with_criteria(mut self, criteria: Criteria) -> Self {
        self.criteria = Some(criteria);
        self
    }

    /// The same options on supply group `g`.
    pub const fn in_group(mut self, g: u8) -> Self {
        self.supply_group = g;
        self
    }

    /// The same options with a peak-and-hold economiser.
    pub const fn with_hold(mut self, hold: HoldPlan) -> Self {
        self.hold = Some(hold);
        self
    }

    /// The same options with thermal ratings.
    pub const fn with_heat(mut self, heat: HeatRatings) -> Self {
        self.heat = heat;
        self
    }

    /// The same options with this converter noise, counts RMS.
    pub const fn with_noise(mut self, counts: f32) -> Self {
        self.noise_counts = counts;
        self
    }
}

/// What the diagnosis of a channel needs, from its design.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Diagnosis {
    /// The design (kept for the comparator band at the level actually set at commissioning).
    pub design: DriverDesign,
    /// Healthy bands of the rise.
    pub expected: Expected,
    /// The diagnostic pulse.
    pub probe: Probe,
    /// Rise capture period, ticks.
    pub rise_period: Ticks,
    /// Converter noise, counts RMS.
    pub noise_counts: f32,
    /// Comparator level as a fraction of the pull-in current.
    pub trip_fraction: f32,
    /// How strict the verdicts are, with the coil's declared build (its eddy-current and
    /// saturation envelope); see [`ChannelOptions::criteria`].
    pub criteria: Criteria,
}

/// Everything the driver knows about one channel.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct ChannelConfig {
    /// The limits the scheduler enforces.
    pub limits: ChannelLimits,
    /// Supply group (see [`ChannelOptions::supply_group`]).
    pub supply_group: u8,
    /// Diagnosis (`None`: scheduled, not diagnosed).
    pub diagnosis: Option<Diagnosis>,
}

impl ChannelConfig {
    /// Limits, healthy bands and diagnostic pulse of a channel from its design
    /// ([`ChannelLimits::from_design`], [`Expected::new`] at the design's ranges,
    /// [`Probe::new`] at `options.probe_fraction`). Floating-point work of a few thousand
    /// instructions on an FPU part (see `docs/performance.md`, `design_budget`).
    ///
    /// # Errors
    /// [`SetupError::Limits`] / [`SetupError::Design`] (reported as channel 0; the driver's
    /// constructor renumbers them), [`SetupError::Capture`] for a zero rise period or a fraction
    /// outside (0, 1).
    pub fn from_design(
        design: &DriverDesign,
        options: &ChannelOptions,
    ) -> Result<Self, SetupError> {
        // Built in the return value itself (written over by an out-of-line helper, so the
        // configuration is not built in a temporary and moved); the limits and the diagnosis
        // each in a frame of their own, so that their working states never sit on the stack
        // together.
        let mut r = Err(SetupError::Capture { channel: 0 });
        config_into(design, options, &mut r);
        r
    }

    /// A channel scheduled by `limits` alone (e.g. `ChannelLimits::new(Ticks(MIN_ON_TICKS),
    /// Ticks(MIN_OFF_TICKS))` from the tool's generated constants), not diagnosed. No floating
    /// point.
    pub const fn from_limits(limits: ChannelLimits, supply_group: u8) -> Self {
        Self {
            limits,
            supply_group,
            diagnosis: None,
        }
    }
}

/// [`ChannelConfig::from_design`] written over `r`.
#[inline(never)]
fn config_into(
    design: &DriverDesign,
    options: &ChannelOptions,
    r: &mut Result<ChannelConfig, SetupError>,
) {
    let limits = match limits_of(design, options) {
        Ok(l) => l,
        Err(e) => {
            *r = Err(e);
            return;
        }
    };
    *r = Ok(ChannelConfig {
        limits,
        supply_group: options.supply_group,
        diagnosis: None,
    });
    if let Ok(c) = r {
        if let Err(e) = diagnosis_into(design, options, &mut c.diagnosis) {
            *r = Err(e);
        }
    }
}

/// [`ChannelConfig::from_design`]'s limits (out of line).
#[inline(never)]
fn limits_of(design: &DriverDesign, options: &ChannelOptions) -> Result<ChannelLimits, SetupError> {
    ChannelLimits::from_design(design, &options.heat, options.hold)
        .map_err(|error| SetupError::Limits { channel: 0, error })
}

/// [`ChannelConfig::from_design`]'s diagnosis, written into `slot` (out of line).
#[inline(never)]
fn diagnosis_into(
    design: &DriverDesign,
    options: &ChannelOptions,
    slot: &mut Option<Diagnosis>,
) -> Result<(), SetupError> {
    let expected = Expected::new(design, &Conditions::default())
        .map_err(|error| SetupError::Design { channel: 0, error })?;
    let probe = Probe::new(design, options.probe_fraction)
        .map_err(|error| SetupError::Design { channel: 0, error })?;
    let t = options.trip_fraction;
    let noise_ok = options.noise_counts.is_finite() && options.noise_counts >= 0.0;
    if options.rise_period.get() == 0 || !(t > 0.0 && t < 1.0) || !noise_ok {
        return Err(SetupError::Capture { channel: 0 });
    }
    *slot = Some(Diagnosis {
        design: *design,
        expected,
        probe,
        rise_period: options.rise_period,
        noise_counts: options.noise_counts,
        trip_fraction: t,
        criteria: options.criteria.unwrap_or_default(),
    });
    Ok(())
}

/// The comparator and converter set-up of a channel, measured at commissioning.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct SenseSetup {
    /// Converter reading at zero current (average of 16 with the coil off), counts.
    pub zero_counts: f32,
    /// Comparator level, counts (`None`: no comparator band, e.g. level out of range).
    pub trip_counts: Option<u16>,
    /// The same in amperes, with the zero taken off.
    pub trip_level: Amps,
    /// Healthy crossing band at that level (`None` without a comparator).
    pub band: Option<ThresholdBand>,
}

/// Whether a channel may be driven.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
#[non_exhaustive]
pub enum Health {
    /// Not yet commissioned (or its commissioning pulse has not run yet).
    Commissioning,
    /// In service.
    InService,
    /// In service, but its diagnostic pulse could not tell (kept, unverified).
    Unverified,
    /// Taken out of service after this finding; only [`crate::Driver::reenable`] brings it back.
    Isolated(Finding),
    /// Taken out of service after a hardware error.
    Faulted(ErrorKind),
    /// Re-enable asked: waiting for its diagnostic pulse.
    Rechecking,
}

impl Health {
    /// Whether pulses may be requested.
    pub const fn in_service(&self) -> bool {
        matches!(self, Health::InService | Health::Unverified)
    }
}

/// A channel's state as the application sees it.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Status {
    /// Health.
    pub health: Health,
    /// The switch is on (full drive or hold).
    pub on: bool,
    /// A rise capture or a diagnostic pulse is being taken.
    pub measuring: bool,
    /// Its supply group is flagged low.
    pub supply_low: bool,
    /// A request waits for a supply re-check.
    pub awaiting_supply_check: bool,
    /// Pulses switched on since start.
    pub pulses: u32,
    /// The latest finding on this channel.
    pub last_finding: Option<Finding>,
    /// The channel is at rest (off, and past its minimum off-time) from this instant.
    pub rest_at: Instant,
}

/// A rise capture in progress.
#[derive(Clone, Copy, Debug)]
pub(crate) struct RiseWatch {
    pub on: Instant,
    pub done: Instant,
    pub pulse: u32,
    /// Late checks so far (capture not complete when due).
    pub retries: u8,
}

/// What the driver keeps per channel.
#[derive(Clone, Copy, Debug)]
pub(crate) struct ChanState {
    pub health: Health,
    pub setup: Option<SenseSetup>,
    pub rise: Option<RiseWatch>,
    /// At rest after every admitted pulse (end + minimum off-time).
    pub rest_at: Instant,
    /// At rest after the latest diagnostic pulse (which the scheduler does not know of).
    pub probe_rest_at: Instant,
    pub probe_due: Option<ProbePurpose>,
    pub parked: Option<Pulse>,
    /// The pulse queued or running last is held until released.
    pub held_pending: bool,
    pub on: bool,
    pub on_at: Instant,
    pub pulses: u32,
    pub last_finding: Option<Finding>,
    pub last_verdict: Option<Verdict>,
    /// Learned or imported baseline, or the learning in progress.
    pub base: crate::baseline::BaseState,
}

impl ChanState {
    /// A channel not yet commissioned, its instants at 0 (set by the constructor).
    pub(crate) const IDLE: Self = Self::new(Instant(0));

    pub(crate) const fn new(now: Instant) -> Self {
        Self {
            health: Health::Commissioning,
            setup: None,
            rise: None,
            rest_at: now,
            probe_rest_at: now,
            probe_due: None,
            parked: None,
            held_pending: false,
            on: false,
            on_at: now,
            pulses: 0,
            last_finding: None,
            last_verdict: None,
            base: crate::baseline::BaseState::None,
        }
    }
}
