//! The figures and checks the outputs read.

use coilwise::{BipolarCheck, Clamp, Figures, Hold, MosfetCheck, SelfHeating};

/// Check outcome.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Status {
    /// Within limits with the stated headroom.
    Pass,
    /// Within the hard limit but short of the recommended headroom.
    Warn,
    /// Outside the limit.
    Fail,
    /// Not a pass/fail figure, or not enough inputs to check.
    Info,
}

impl Status {
    /// Lower-case word used in the report and JSON.
    pub fn word(self) -> &'static str {
        match self {
            Status::Pass => "pass",
            Status::Warn => "warn",
            Status::Fail => "fail",
            Status::Info => "info",
        }
    }
}

/// One pass / warn / fail check.
#[derive(Clone, Debug, PartialEq)]
pub struct Check {
    /// Stable identifier (JSON).
    pub id: &'static str,
    /// What is checked.
    pub title: &'static str,
    /// Outcome.
    pub status: Status,
    /// The figure checked, with unit.
    pub value: String,
    /// The limit it is checked against, with unit.
    pub limit: String,
    /// Headroom as a fraction (positive: inside the limit), when it applies.
    pub margin: Option<f64>,
    /// Rule and remarks.
    pub note: String,
}

/// Expected time for the coil current to reach a threshold, over all tolerance corners.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Band {
    /// Threshold, A.
    pub threshold: f64,
    /// Earliest crossing over the corners, s (`None`: reached at no corner).
    pub earliest: Option<f64>,
    /// Latest crossing, s (`None`: not reached at one or more corners).
    pub latest: Option<f64>,
    /// Earliest in ticks, rounded down.
    pub earliest_ticks: Option<u32>,
    /// Latest in ticks, rounded up.
    pub latest_ticks: Option<u32>,
    /// How many corners never reach the threshold.
    pub unreachable_corners: usize,
}

/// Where the bands come from.
pub const BAND_SOURCE: &str = "diagnosis-module";
/// The same, in words.
pub const BAND_SOURCE_TEXT: &str = "from the core's diagnosis module (ThresholdBand): the hull over all 32 tolerance corners (supply, winding temperature, resistance, inductance, sense), in measured terms (current read through the sense resistor at its nominal value); for a threshold some corner never reaches, the tool counts those corners and gives the earliest crossing of the rest";

/// One clamp in the comparison.
#[derive(Clone, Debug, PartialEq)]
pub struct ClampRow {
    /// Label with values ("zener 16 V + diode").
    pub label: String,
    /// Kind word as in `clamp.kind`.
    pub kind: &'static str,
    /// Whether this is the clamp in the design file.
    pub fitted: bool,
    /// The clamp.
    pub clamp: Clamp,
    /// Figures at the release corner, or why there are none.
    pub figures: Result<Figures, String>,
    /// Switch-voltage check of this clamp.
    pub status: Status,
}

/// The hold PWM at one operating point (from the core) and the clamp's share while holding.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct HoldPoint {
    /// Duty, valley, peak, ripple, average current and winding power of the periodic hold.
    pub hold: Hold,
    /// Average clamp power while holding, W (the core's `Hold::clamp_power`); `None` for a
    /// clamp without a first-order freewheel loop.
    pub clamp_power: Option<f64>,
}

/// Why there is no hold PWM at a point.
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum HoldProblem {
    /// The hold current is at or above what the supply can drive: not even 100 % duty holds it.
    CannotHold,
    /// The PWM is too slow: the current falls to zero in every off-interval.
    Discontinuous,
    /// The fitted clamp (RC snubber) has no first-order freewheel loop for the hold model.
    NotFirstOrder,
    /// The clamp (or breakdown) voltage is so far above the supply that the off-interval is
    /// below f32 resolution of the period: the duty would round to 100 %.
    OffIntervalTooShort,
    /// Another error from the core.
    Other(coilwise::Error),
}

impl HoldProblem {
    /// A sentence for reports.
    pub fn describe(&self) -> String {
        match self {
            HoldProblem::CannotHold => {
                "cannot hold: the current is out of reach even at 100 % duty".to_string()
            }
            HoldProblem::Discontinuous => {
                "PWM too slow: the current falls to zero in every off-interval".to_string()
            }
            HoldProblem::NotFirstOrder => "not modelled for an RC snubber".to_string(),
            HoldProblem::OffIntervalTooShort => "not computed: the clamp or breakdown voltage is so far above the supply that the off-interval is too short to resolve (the duty would round to 100 %)".to_string(),
            HoldProblem::Other(e) => e.to_string(),
        }
    }
}

/// The hold PWM at one point, or why there is none.
pub type HoldOutcome = Result<HoldPoint, HoldProblem>;

/// Hold phase at the three evaluated points.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct HoldFigures {
    /// Nominal point.
    pub nominal: HoldOutcome,
    /// Pull-in corner: lowest supply, hottest coil, so the highest duty.
    pub pull_in: HoldOutcome,
    /// Release corner: highest supply, coldest coil, so the lowest duty and largest ripple.
    pub release: HoldOutcome,
}

impl HoldFigures {
    /// The three points with their names.
    pub fn points(&self) -> [(&'static str, &HoldOutcome); 3] {
        [
            ("nominal", &self.nominal),
            ("pull_in", &self.pull_in),
            ("release", &self.release),
        ]
    }
}

/// The switch drive check from the core.
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum DriveCheck {
    /// Bipolar saturation at minimum gain.
    Bipolar(BipolarCheck),
    /// MOSFET gate voltage and conduction loss.
    Mosfet(MosfetCheck),
}

/// Self-heated winding temperature (from the core) and the duty it was computed at.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct SelfHeatingCheck {
    /// Hottest ambient, °C.
    pub ambient: f64,
    /// Thermal resistance, K/W.
    pub r_th: f64,
    /// Full-voltage duty used: the planned `on_time × repetition`, or 1 without a plan.
    pub duty: f64,
    /// The equilibrium, or the core's reason (overtemperature).
    pub outcome: Result<SelfHeating, coilwise::Error>,
}

/// Which limit sets the maximum repetition rate.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum RateLimit {
    /// The shortest legal cycle: minimum on-time plus safe minimum off-time.
    Timing,
    /// The clamp's power rating over its energy per pulse.
    ClampRating,
}

/// A maximum repetition rate (Hz) and the limit that sets it.
pub type RepetitionLimit = (f64, RateLimit);

/// Firmware tick counts (each rounded toward safety).
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct TickCounts {
    /// Minimum on-time, rounded up; `None` when the coil never pulls in at the pull-in corner.
    pub min_on: Option<u32>,
    /// Safe minimum off-time, rounded up.
    pub min_off: u32,
    /// Worst pull-in time, rounded up.
    pub pull_in: Option<u32>,
    /// Worst release time to drop-out, rounded up.
    pub release: u32,
}
