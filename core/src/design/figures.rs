//! The budget's result types ([`Figures`], [`TickBudget`], [`TimingBudget`]) and the slots the
//! budget writes its figures into in place (see [`super::DriverDesign::budget`]).

use crate::physics::circuit::OperatingPoint;
use crate::physics::clamp::EnergySplit;
use crate::physics::off_time::{OffTime, OffTimeLimit};
use crate::time::Ticks;
use crate::units::{Amps, Hertz, Joules, Seconds, Volts, Watts};

/// Where [`super::DriverDesign::budget_core`] writes the figures of point `0` (nominal), `1` (pull-in
/// corner) and `2` (release corner).
pub(crate) trait FigureSlots {
    /// The slot for point `point`'s figures (called once per point, in order).
    fn slot(&mut self, point: usize) -> &mut Figures;
}

impl FigureSlots for TimingBudget {
    fn slot(&mut self, point: usize) -> &mut Figures {
        match point {
            0 => &mut self.nominal,
            1 => &mut self.pull_in_corner,
            _ => &mut self.release_corner,
        }
    }
}

/// The times and ticks of a budget, without its figures.
pub(crate) struct BudgetTimes {
    pub(crate) min_on: Seconds,
    pub(crate) min_off: Seconds,
    pub(crate) release_time: Seconds,
    pub(crate) ticks: TickBudget,
}

/// Every timing, energy and stress figure at one operating point.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Figures {
    /// Where these figures were evaluated.
    pub point: OperatingPoint,
    /// Final on-state current I∞, A (also the switch-off current assumed).
    pub final_current: Amps,
    /// Rise time constant with the armature released, s.
    pub tau_on: Seconds,
    /// Time from switch-on to pull-in current; `None` when the coil never pulls in here.
    pub pull_in_time: Option<Seconds>,
    /// `I∞ / I_pull − 1`.
    pub pull_in_margin: f32,
    /// Release time constant (armature operated, clamp loop), s.
    pub tau_off: Seconds,
    /// Switch-off to drop-out current, s.
    pub release_time: Seconds,
    /// Switch-off to zero current, s.
    pub time_to_zero: Seconds,
    /// Where the stored energy goes.
    pub energy: EnergySplit,
    /// Peak voltage across the switch (magnitude), V.
    pub peak_switch_voltage: Volts,
    /// Switch breakdown minus peak switch voltage, V. Negative: the switch avalanches before the
    /// clamp takes over, and the release figures (which assume the clamp conducts) do not hold.
    pub switch_headroom: Volts,
    /// Peak voltage of the switch node against ground (signed), V.
    pub peak_node_voltage: Volts,
    /// Clamp average power at the planned duty, W.
    pub clamp_power: Option<Watts>,
    /// Highest repetition rate for the clamp rating, Hz (`None`: no rating or no energy).
    pub max_repetition: Option<Hertz>,
    /// Safe minimum off-time at this point.
    pub off_time: OffTime,
}

impl Figures {
    /// A placeholder whose every field the budget overwrites (in-place construction).
    pub(crate) const UNSET: Figures = Figures {
        point: OperatingPoint::new(Volts::new(0.0), crate::units::Celsius::new(0.0)),
        final_current: Amps::new(0.0),
        tau_on: Seconds::new(0.0),
        pull_in_time: None,
        pull_in_margin: 0.0,
        tau_off: Seconds::new(0.0),
        release_time: Seconds::new(0.0),
        time_to_zero: Seconds::new(0.0),
        energy: EnergySplit {
            stored: Joules::new(0.0),
            clamp: Joules::new(0.0),
            winding: Joules::new(0.0),
            supply: Joules::new(0.0),
            capacitor: Joules::new(0.0),
        },
        peak_switch_voltage: Volts::new(0.0),
        switch_headroom: Volts::new(0.0),
        peak_node_voltage: Volts::new(0.0),
        clamp_power: None,
        max_repetition: None,
        off_time: OffTime {
            release: Seconds::new(0.0),
            residual: Seconds::new(0.0),
            thermal: Seconds::new(0.0),
            required: Seconds::new(0.0),
            limit: OffTimeLimit::Release,
        },
    };
}

/// The firmware's timing constants in ticks, each rounded up.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct TickBudget {
    /// Minimum on-time (worst pull-in + operate allowance).
    pub min_on: Ticks,
    /// Safe minimum off-time.
    pub min_off: Ticks,
    /// Worst-corner electrical pull-in time.
    pub pull_in: Ticks,
    /// Worst electrical release time (to drop-out), [`TimingBudget::release_time`].
    pub release: Ticks,
}

/// The result of [`super::DriverDesign::budget`].
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct TimingBudget {
    /// Nominal supply, mid temperature, nominal parts.
    pub nominal: Figures,
    /// Hot, high-R, low-supply corner.
    pub pull_in_corner: Figures,
    /// Cold, low-R, high-supply corner.
    pub release_corner: Figures,
    /// Minimum on-time, s.
    pub min_on_time: Seconds,
    /// Safe minimum off-time, s.
    pub min_off_time: Seconds,
    /// Longest electrical release time (switch-off to drop-out current), s: the release corner's,
    /// or for an RC snubber the longest over all corners.
    pub release_time: Seconds,
    /// The same in ticks.
    pub ticks: TickBudget,
}

impl TimingBudget {
    /// A placeholder whose every field [`super::DriverDesign::budget_into`] overwrites.
    pub(crate) const UNSET: TimingBudget = TimingBudget {
        nominal: Figures::UNSET,
        pull_in_corner: Figures::UNSET,
        release_corner: Figures::UNSET,
        min_on_time: Seconds::new(0.0),
        min_off_time: Seconds::new(0.0),
        release_time: Seconds::new(0.0),
        ticks: TickBudget {
            min_on: Ticks(0),
            min_off: Ticks(0),
            pull_in: Ticks(0),
            release: Ticks(0),
        },
    };
}
