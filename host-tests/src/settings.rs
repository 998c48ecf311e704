//! Integrator settings: step selection and the current floor.

use crate::params::{finite_gt0, SimError};

/// How the integrator chooses its steps.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Stepping {
    /// Bogacki–Shampine 3(2) with error control (the default).
    Adaptive {
        /// Relative tolerance per step (> 0).
        rel_tol: f64,
        /// Absolute tolerance on coil current per step, amperes (> 0).
        abs_tol_amps: f64,
        /// Largest step in seconds (> 0). Also bounds the time resolution of
        /// comparator crossings and of peak tracking.
        max_step_s: f64,
    },
    /// Fixed step, no error control (for convergence-order checks). Steps are
    /// still shortened to land on switching edges, end stops and current zero.
    Fixed {
        /// Step in seconds (> 0).
        step_s: f64,
    },
}

/// Integrator settings.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SolverSettings {
    /// Step selection.
    pub stepping: Stepping,
    /// With the switch off and no snubber, a coil current that has decayed
    /// below this many amperes is set to exactly zero (the clamp diode is
    /// then blocking). Avoids the vanishing time constant of the exponential
    /// diode law near zero current. Default 1 µA.
    pub current_floor_amps: f64,
}

impl Default for SolverSettings {
    fn default() -> Self {
        SolverSettings {
            stepping: Stepping::Adaptive {
                rel_tol: 1e-7,
                abs_tol_amps: 1e-8,
                max_step_s: 10e-6,
            },
            current_floor_amps: 1e-6,
        }
    }
}

impl SolverSettings {
    /// Adaptive stepping with a given largest step (seconds), other values default.
    pub fn with_max_step(max_step_s: f64) -> Self {
        let mut s = Self::default();
        if let Stepping::Adaptive {
            max_step_s: ref mut m,
            ..
        } = s.stepping
        {
            *m = max_step_s;
        }
        s
    }

    pub(crate) fn validate(&self) -> Result<(), SimError> {
        match self.stepping {
            Stepping::Adaptive {
                rel_tol,
                abs_tol_amps,
                max_step_s,
            } => {
                finite_gt0(rel_tol, "stepping.rel_tol")?;
                finite_gt0(abs_tol_amps, "stepping.abs_tol_amps")?;
                finite_gt0(max_step_s, "stepping.max_step_s")?;
            }
            Stepping::Fixed { step_s } => finite_gt0(step_s, "stepping.step_s")?,
        }
        finite_gt0(self.current_floor_amps, "current_floor_amps")
    }
}
