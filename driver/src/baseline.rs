//! The learned per-coil baseline: learnt at commissioning, kept by the application in flash,
//! used by every later diagnostic pulse.
//!
//! # Learning
//!
//! At [`Driver::commission`] a diagnosed channel without an imported baseline runs
//! [`Driver::set_learning`] diagnostic pulses (default [`LEARN_PULSES`]) instead of one. Each is
//! judged against the design bands first (the core's [`Learning::add`]): a pulse that is not
//! healthy voids the learning, is acted on as any commissioning finding (a faulty coil is
//! isolated, never learned), and [`EventKind::BaselineNotLearned`] says why. When every pulse
//! was healthy the baseline is kept with the channel and [`EventKind::BaselineLearned`] tells the
//! application to store it ([`Driver::baseline_record`], the core's fixed-size record of
//! [`RECORD_LEN`] bytes, versioned and checksummed).
//!
//! # Using it
//!
//! Later diagnostic pulses (a re-enable, a supply re-check, the commissioning pulse after an
//! import) are judged by the core's [`judge_baseline`]: the design bands first, then the learned
//! inductance, resistance (copper-α corrected to the board temperature given by
//! [`Driver::set_board_temperature`], when the baseline was learned with one too) and fast
//! component. Rise captures of real pulses keep the design bands: their window and sampling are
//! not those the baseline was learned on.
//!
//! # Importing
//!
//! [`Driver::import_baseline`] (between [`Driver::new`] and [`Driver::commission`]) decodes a
//! stored record and checks that it belongs to the channel's design: its inductance and
//! resistance must lie inside the design's healthy bands, widened by the model allowances. A
//! corrupted, foreign or mismatched record is refused with a [`BaselineError`] (and an
//! [`EventKind::BaselineRejected`]); the channel then learns afresh. Never a panic.

use coilwise::diagnosis::baseline::{RecordError, RECORD_LEN};
use coilwise::diagnosis::{
    fit_response, judge_baseline, judge_response, Baseline, Expected, LearnError, Learning,
    Sampling, Verdict,
};
use coilwise::Celsius;

use crate::channel::Diagnosis;
use crate::error::{DriverError, ErrorKind};
use crate::event::EventKind;
use crate::sense::CurrentSense;
use crate::{Driver, Phase};

/// Diagnostic pulses learnt at commissioning by default: enough for a spread, short enough for
/// start-up (each costs the probe plus the coil's minimum off-time).
pub const LEARN_PULSES: u8 = 3;

/// Why a stored baseline was not taken.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
#[non_exhaustive]
pub enum BaselineError {
    /// The bytes are not a baseline record (erased flash, corrupted, another version).
    Record(RecordError),
    /// A valid record, but not of this channel's coil: its inductance or resistance lies outside
    /// the design's healthy bands.
    Mismatch,
    /// The channel has no design to check the record against (not diagnosed).
    NotDiagnosed,
}

/// What a channel knows of its baseline.
#[derive(Clone, Copy, Debug, PartialEq)]
pub(crate) enum BaseState {
    /// None (not learnt, learning off, or learning refused).
    None,
    /// Learning: pulses accumulated so far.
    Learning(Learning),
    /// Learnt or imported.
    Ready(Baseline),
}

/// Whether a baseline could be this design's coil: `L_b ∈ [k_s·V_d/s_max·(1 − a_s − m),
/// k_s·V_d/s_min·(1 + m)]` and `R_b + R_ext ∈ [k_s·V_d/I∞,max·(1 − m),
/// k_s·V_d/I∞,min·(1 + m)/(1 − a_τ)]` (`a_s`, `a_τ` the eddy allowances on slope and τ: an eddy
/// path shortens the fitted τ of a diagnostic pulse, so its extrapolated `I∞` reads low and the
/// learnt resistance high, consistently from pulse to pulse; `m` the model margin plus the
/// baseline margin). The
/// bands are those of the whole supply and temperature range, so a record of another coil of the
/// same design passes: the check is for a record of another design or channel, not of another
/// sample of the part.
fn fits_design(b: &Baseline, e: &Expected, c: &coilwise::diagnosis::Criteria) -> bool {
    let drive = e.nominal_drive().value();
    let m = c.model_margin + c.baseline_margin;
    let l = b.inductance().value();
    let l_lo = drive / e.slope.max * (1.0 - c.fast_slope - m);
    let l_hi = drive / e.slope.min * (1.0 + m);
    let r_on = b.resistance().value() + e.external_resistance().value();
    let r_lo = drive / e.final_current.max.value() * (1.0 - m);
    let r_hi = drive / e.final_current.min.value() * (1.0 + m) / (1.0 - c.fast_tau).max(0.05);
    l >= l_lo && l <= l_hi && r_on >= r_lo && r_on <= r_hi
}

/// Judges a diagnostic pulse's samples (already cut to the probe window) against the channel's
/// baseline state: learning adds the pulse ([`Learning::add`]: the design verdict), a baseline
/// judges it ([`judge_baseline`]), none judges it against the design ([`judge_response`]). A
/// trace the fit refuses (open, short, sensor) is judged as the core's probe does (the fit runs
/// a second time on that path only).
#[inline(never)]
pub(crate) fn judge_probe_samples(
    samples: &[u16],
    sampling: &Sampling,
    d: &Diagnosis,
    state: &mut BaseState,
    board: Option<Celsius>,
    options: &coilwise::diagnosis::FitOptions,
) -> Verdict {
    let criteria = &d.criteria;
    match fit_response(samples, sampling, options) {
        Ok(fit) => match state {
            BaseState::Learning(l) => l.add(&fit, &d.expected, board, criteria),
            BaseState::Ready(b) => judge_baseline(&fit, b, &d.expected, board, criteria),
            BaseState::None => judge_response(&fit, &d.expected, criteria),
        },
        Err(_) => d
            .probe
            .judge(samples, sampling, &d.expected, criteria, options),
    }
}

impl<Sw, Pwm, Sense, const N: usize, const Q: usize, const E: usize>
    Driver<'_, Sw, Pwm, Sense, N, Q, E>
where
    Sense: CurrentSense,
{
    /// Diagnostic pulses learnt per channel at commissioning (see the module docs); 0 turns
    /// learning off (one design-band pulse per channel, as without a baseline). Default
    /// [`LEARN_PULSES`].
    ///
    /// # Errors
    /// [`ErrorKind::Phase`] once commissioning has started.
    pub fn set_learning(&mut self, pulses: u8) -> Result<(), DriverError> {
        if self.st.phase != Phase::NotStarted {
            return Err(DriverError::general(ErrorKind::Phase));
        }
        self.learn_pulses = pulses;
        Ok(())
    }

    /// The board temperature now (`None`: not measured), used by the learning and by every
    /// later baseline verdict to refer the winding resistance to the coil's reference
    /// temperature with the copper law `R(T) = R_ref·(1 + α(T − T_ref))`. Give it before each
    /// diagnostic pulse it should apply to; the winding is taken to be within the criteria's
    /// `board_kelvin` of it (a coil at rest is at ambient). A non-finite reading counts as none.
    pub fn set_board_temperature(&mut self, t: Option<Celsius>) {
        self.board = t.filter(|c| c.value().is_finite());
    }

    /// Channel `i`'s baseline, once learnt or imported.
    pub fn baseline(&self, i: usize) -> Option<&Baseline> {
        match &self.st.chans.get(i)?.base {
            BaseState::Ready(b) => Some(b),
            _ => None,
        }
    }

    /// Channel `i`'s baseline as the core's byte record ([`RECORD_LEN`] bytes: marker, version,
    /// figures, CRC-32), for the application to keep in flash; `None` when it has none.
    pub fn baseline_record(&self, i: usize) -> Option<[u8; RECORD_LEN]> {
        self.baseline(i).map(Baseline::encode)
    }

    /// Gives channel `i` a stored baseline record (between [`Driver::new`] and
    /// [`Driver::commission`]): its commissioning pulse is then judged against it and nothing is
    /// learnt.
    ///
    /// # Errors
    /// [`ErrorKind::Phase`] after commissioning started; [`ErrorKind::UnknownChannel`];
    /// [`ErrorKind::Baseline`] for a record that does not decode or does not fit the channel's
    /// design (also queued as [`EventKind::BaselineRejected`]): the channel keeps no baseline
    /// and learns at commissioning.
    pub fn import_baseline(&mut self, i: usize, bytes: &[u8]) -> Result<(), DriverError> {
        if self.st.phase != Phase::NotStarted {
            return Err(DriverError::general(ErrorKind::Phase));
        }
        let Some(cfg) = self.configs.get(i) else {
            return Err(DriverError::general(ErrorKind::UnknownChannel));
        };
        let checked = match (&cfg.diagnosis, Baseline::decode(bytes)) {
            (None, _) => Err(BaselineError::NotDiagnosed),
            (Some(_), Err(e)) => Err(BaselineError::Record(e)),
            (Some(d), Ok(b)) if fits_design(&b, &d.expected, &d.criteria) => Ok(b),
            (Some(_), Ok(_)) => Err(BaselineError::Mismatch),
        };
        match checked {
            Ok(b) => {
                self.st.chans[i].base = BaseState::Ready(b);
                Ok(())
            }
            Err(why) => {
                self.st.chans[i].base = BaseState::None;
                let now = self.st.chans[i].rest_at;
                self.emit(now, i, EventKind::BaselineRejected(why));
                Err(DriverError::on(i, ErrorKind::Baseline(why)))
            }
        }
    }

    /// At commissioning: a channel without a baseline starts learning (if learning is on).
    pub(crate) fn start_learning(&mut self, i: usize) {
        let c = &mut self.st.chans[i];
        if !matches!(c.base, BaseState::Ready(_)) {
            c.base = if self.learn_pulses > 0 {
                BaseState::Learning(Learning::new())
            } else {
                BaseState::None
            };
        }
    }

    /// After a commissioning (or re-enable) pulse of channel `i` found `finding`: whether
    /// another learning pulse is due; otherwise the learning is closed (baseline kept, or the
    /// reason it was not learnt queued). A pulse that is not healthy closes it at once, also
    /// one the fit refused (open, short, sensor), which the core's learning never saw.
    pub(crate) fn learning_step(
        &mut self,
        now: coilwise::Instant,
        i: usize,
        finding: coilwise::diagnosis::Finding,
    ) -> bool {
        let BaseState::Learning(l) = self.st.chans[i].base else {
            return false;
        };
        let outcome = match l.finish(self.learn_pulses) {
            Err(LearnError::TooFewPulses { .. })
                if finding == coilwise::diagnosis::Finding::Healthy =>
            {
                return true;
            }
            Err(LearnError::TooFewPulses { .. }) => Err(LearnError::Refused(finding)),
            other => other,
        };
        match outcome {
            Ok(b) => {
                self.st.chans[i].base = BaseState::Ready(b);
                self.emit(now, i, EventKind::BaselineLearned { pulses: b.pulses() });
            }
            Err(e) => {
                self.st.chans[i].base = BaseState::None;
                self.emit(now, i, EventKind::BaselineNotLearned(e));
            }
        }
        false
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The design check admits the design's own nominal coil, and one whose learnt resistance
    /// reads 43 % high (what the demo's eddy path does to a probe's fitted τ), and refuses one of
    /// half the inductance, half the resistance or five times it (a record of another design).
    /// The high side is loose by the eddy allowance on τ: it catches another design, not a drift.
    #[test]
    fn a_record_of_another_coil_does_not_fit_the_design() {
        use coilwise::diagnosis::Conditions;
        use coilwise::{
            Celsius, Circuit, Clamp, Coil, DriverDesign, Henries, Ohms, SupplyRange, Switch,
            TemperatureRange, TickRate, Topology, Volts,
        };
        let coil = Coil::new(
            Ohms::new(72.0),
            Celsius::new(20.0),
            Henries::new(0.30),
            Henries::new(0.45),
            Volts::new(16.8),
            Volts::new(2.4),
        )
        .unwrap();
        let circuit = Circuit::new(
            coil,
            Switch::Mosfet {
                on_resistance: Ohms::new(0.05),
                breakdown: Volts::new(60.0),
            },
            Topology::LowSide,
            Ohms::new(0.1),
            Ohms::new(0.5),
            Clamp::diode(Volts::new(0.7)).unwrap(),
        )
        .unwrap();
        let design = DriverDesign::new(
            circuit,
            SupplyRange::with_tolerance(Volts::new(24.0), 0.1).unwrap(),
            TemperatureRange::new(Celsius::new(-20.0), Celsius::new(60.0)).unwrap(),
            TickRate::new(1_000_000).unwrap(),
        );
        let e = Expected::new(&design, &Conditions::default()).unwrap();
        let c = coilwise::diagnosis::Criteria::default();
        // A record written by hand with the core's layout, then decoded: (L, R at 20 °C).
        let record = |l: f32, r: f32| {
            let mut b = [0u8; RECORD_LEN];
            b[..2].copy_from_slice(&[0xC0, 0x11]);
            b[2] = coilwise::diagnosis::baseline::RECORD_VERSION;
            b[4] = 3;
            for (at, x) in [(8, l), (12, r), (16, 20.0), (20, 0.0), (24, 0.0), (28, 0.0)] {
                b[at..at + 4].copy_from_slice(&f32::to_le_bytes(x));
            }
            b[32..36].copy_from_slice(&f32::to_le_bytes(l / (r + 0.65)));
            let crc = coilwise::diagnosis::baseline::crc32(&b[..36]);
            b[36..].copy_from_slice(&crc.to_le_bytes());
            Baseline::decode(&b).unwrap()
        };
        assert!(fits_design(&record(0.30, 72.0), &e, &c));
        assert!(!fits_design(&record(0.15, 72.0), &e, &c));
        assert!(fits_design(&record(0.30, 72.0 * 1.43), &e, &c));
        assert!(!fits_design(&record(0.30, 360.0), &e, &c));
        assert!(!fits_design(&record(0.30, 36.0), &e, &c));
    }
}
