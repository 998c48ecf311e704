//! Short phrases for the log: what a finding, a delay reason or a refusal means, in words.

use coilwise::diagnosis::{Finding, TraceFault, Undetermined};
use coilwise::schedule::{DelayReason, Refusal};

/// A finding in words.
pub fn finding(f: &Finding) -> &'static str {
    match f {
        Finding::Healthy => "healthy",
        Finding::OpenCircuit => "OPEN CIRCUIT (no current: broken wire or connector)",
        Finding::ShortCircuit => "SHORT CIRCUIT (winding bypassed)",
        Finding::ShortedTurns => "SHORTED TURNS (inductance/resistance below band)",
        Finding::HighResistance => "HIGH RESISTANCE (connector, crimp or wire in series)",
        Finding::SupplyLow => "SUPPLY LOW (drive below the design range)",
        Finding::InductanceHigh => "INDUCTANCE HIGH (other coil fitted, or armature held in)",
        Finding::SlowRise => "SLOW RISE (high resistance or low supply)",
        Finding::ArmatureStuck => "ARMATURE STUCK (no movement seen)",
        Finding::SensorImplausible(t) => match t {
            TraceFault::NotMonotone { .. } => "SENSOR IMPLAUSIBLE (trace not monotone)",
            TraceFault::BelowZero { .. } => "SENSOR IMPLAUSIBLE (reads below zero)",
            TraceFault::PoorFit => "SENSOR IMPLAUSIBLE (trace is not a first-order rise)",
            TraceFault::Flat { .. } => "SENSOR IMPLAUSIBLE (flat mid-scale trace)",
            _ => "SENSOR IMPLAUSIBLE",
        },
        Finding::CannotTell(u) => match u {
            Undetermined::TooFewSamples => "cannot tell (too few samples)",
            Undetermined::TooLittleSignal => "cannot tell (too little signal)",
            Undetermined::WindowTooShort => "cannot tell (window too short for tau)",
            Undetermined::NoConvergence => "cannot tell (fit did not settle)",
            Undetermined::RangeTooSmall => "cannot tell (converter range too small)",
            Undetermined::NotYet => "cannot tell (not crossed yet)",
            Undetermined::MovementTooEarly => "cannot tell (armature moved too early)",
            _ => "cannot tell",
        },
        Finding::ShapeUnexplained => {
            "shape unexplained (smooth misfit; not isolated without a confirming measurement)"
        }
        _ => "other finding",
    }
}

/// A delay reason in words.
pub fn delay(r: &DelayReason) -> &'static str {
    match r {
        DelayReason::ChannelBusy => "channel busy with an earlier pulse",
        DelayReason::OffTime => "minimum off-time after the previous pulse",
        DelayReason::Thermal => "thermal budget needs time to recover",
        DelayReason::Inrush => "inrush stagger: another coil is pulling in",
        DelayReason::MinOnTime => "pulse has not reached its minimum on-time",
        _ => "other constraint",
    }
}

/// A refusal in words.
pub fn refusal(r: &Refusal) -> &'static str {
    match r {
        Refusal::UnknownChannel => "unknown channel",
        Refusal::ZeroDuration => "zero duration",
        Refusal::BelowMinOn { .. } => "shorter than the minimum on-time (might not pull in)",
        Refusal::AboveMaxOn { .. } => "longer than the maximum on-time",
        Refusal::QueueFull => "queue full",
        Refusal::StartPassed => "start tick already passed",
        Refusal::BeyondHorizon => "ends too far ahead",
        Refusal::ThermalBudget => "pulse exceeds the thermal budget",
        Refusal::TooLate { .. } => "earliest allowed start is later than the request accepts",
        Refusal::TimeWentBackwards => "time went backwards",
        _ => "other refusal",
    }
}

/// A hardware error kind in words.
pub fn error_kind(k: &crate::ErrorKind) -> &'static str {
    use crate::{ErrorKind, SenseErrorKind};
    match k {
        ErrorKind::Switch => "switch output failed",
        ErrorKind::Pwm => "hold PWM failed",
        ErrorKind::Sense(s) => match s {
            SenseErrorKind::Busy => "current sense busy",
            SenseErrorKind::PeriodUnsupported => "sample period not supported by the converter",
            SenseErrorKind::BufferLength => "capture longer than the buffer",
            SenseErrorKind::Overrun => "converter overrun (samples lost)",
            SenseErrorKind::LevelOutOfRange => "comparator level out of range",
            _ => "current sense failed",
        },
        ErrorKind::CaptureMissing => "capture did not complete",
        ErrorKind::TimeWentBackwards => "time went backwards",
        ErrorKind::UnknownChannel => "unknown channel",
        ErrorKind::Phase => "not allowed before commissioning",
        ErrorKind::SelfCheck => "self-check vectors failed on this device",
        ErrorKind::NotIsolated => "channel is not isolated",
        ErrorKind::Baseline(e) => baseline_error(e),
    }
}

/// Why a stored baseline record was refused, in words.
pub fn baseline_error(e: &crate::BaselineError) -> &'static str {
    use crate::BaselineError;
    use coilwise::diagnosis::RecordError;
    match e {
        BaselineError::Record(r) => match r {
            RecordError::Length { .. } => "baseline record has the wrong length",
            RecordError::NoMarker => "no baseline record (erased or foreign bytes)",
            RecordError::Version { .. } => "baseline record of another version",
            RecordError::Checksum { .. } => "baseline record corrupted (checksum mismatch)",
            RecordError::Field => "baseline record has a field out of range",
            _ => "baseline record unreadable",
        },
        BaselineError::Mismatch => "baseline record is not of this channel's coil design",
        BaselineError::NotDiagnosed => "channel is not diagnosed (no design to check against)",
    }
}

/// Why no baseline was learnt, in words.
pub fn learn_error(e: &coilwise::diagnosis::LearnError) -> &'static str {
    use coilwise::diagnosis::LearnError;
    match e {
        LearnError::TooFewPulses { .. } => "too few healthy pulses",
        LearnError::Refused(_) => "a pulse was not healthy against the design bands",
        LearnError::MixedTemperature => "board temperature given for some pulses only",
        _ => "not learnt",
    }
}
