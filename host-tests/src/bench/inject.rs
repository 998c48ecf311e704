//! Changing a channel while it runs: faults, magnetic extras, a set current.
//!
//! Every change keeps the loop currents continuous where the physics does
//! (a coil's terminal current cannot jump through its inductance) and books
//! the change of stored magnetic energy as [`crate::Energy::removed_by_events`]
//! (negative when the change adds energy), so the energy books still close.

use super::Bench;
use crate::fault::{Fault, FaultSet};
use crate::magnetics::{Magnetics, EDDY, SECT};
use crate::observe::EventKind;
use crate::params::{check, Mechanics, SimError};
use crate::plant::{self, Eff};

impl<const N: usize> Bench<N> {
    /// Inject a fault into a channel now. The coil's terminal current is
    /// kept continuous (flux linkages are re-computed); a newly bridged
    /// section ([`Fault::ShortedTurns`]) starts with the terminal current (it
    /// was in series with it an instant before); any change of stored
    /// magnetic energy is booked as [`crate::Energy::removed_by_events`].
    ///
    /// Errors: [`SimError::NoSuchChannel`]; [`SimError::InvalidParameter`]
    /// naming the field when the fault's values are outside their domain.
    pub fn inject(&mut self, ch: usize, fault: Fault) -> Result<(), SimError> {
        self.check_ch(ch)?;
        fault.validate()?;
        let mut f = self.faults[ch];
        f.apply(fault);
        self.rebuild(ch, f, self.mag[ch]);
        self.emit(ch, EventKind::FaultInjected(fault), self.now_ns);
        Ok(())
    }

    /// Remove all faults of a channel (same energy rule as [`Bench::inject`]).
    /// The magnetic extras ([`Bench::set_magnetics`]) stay: they are the coil.
    pub fn clear_faults(&mut self, ch: usize) -> Result<(), SimError> {
        self.check_ch(ch)?;
        self.rebuild(ch, FaultSet::default(), self.mag[ch]);
        self.emit(ch, EventKind::FaultsCleared, self.now_ns);
        Ok(())
    }

    /// Give a channel's coil an eddy-current loop and/or saturation (or
    /// remove them with [`Magnetics::LINEAR`]), now or at any later time.
    /// The terminal current and an existing eddy loop's current are kept; a
    /// new eddy loop starts with no current of its own.
    ///
    /// Errors: [`SimError::NoSuchChannel`]; [`SimError::InvalidParameter`]
    /// (`eddy.*`, `saturation.*`) outside the domains of [`Magnetics`].
    pub fn set_magnetics(&mut self, ch: usize, mag: Magnetics) -> Result<(), SimError> {
        self.check_ch(ch)?;
        mag.validate()?;
        self.rebuild(ch, self.faults[ch], mag);
        self.emit(ch, EventKind::MagneticsChanged, self.now_ns);
        Ok(())
    }

    /// The magnetic extras of a channel's coil.
    pub fn magnetics(&self, ch: usize) -> Result<Magnetics, SimError> {
        self.check_ch(ch)?;
        Ok(self.mag[ch])
    }

    /// Set a channel's coil current to `amps` now (a residual current at
    /// switch-on: a pulse soon after a release, or after a PWM hold). The
    /// shorted section, if any, takes its steady (DC) share
    /// `i₁ = i·R_b/(R_b + R₁)`; an eddy loop carries no current (its DC
    /// value). With the switch off the current then decays through the clamp.
    /// The energy this puts into (or takes out of) the field is booked as
    /// [`crate::Energy::removed_by_events`] (negative for energy added).
    ///
    /// Errors: [`SimError::NoSuchChannel`];
    /// [`SimError::InvalidParameter`]`("current.amps")` for a negative or
    /// non-finite value, or a non-zero one on an open coil.
    pub fn set_current(&mut self, ch: usize, amps: f64) -> Result<(), SimError> {
        self.check_ch(ch)?;
        check(amps.is_finite() && amps >= 0.0, "current.amps")?;
        check(amps == 0.0 || !self.eff[ch].open, "current.amps")?;
        let c = ch;
        let old = self.op(c);
        let w_old = self.eff[c].stored(&self.y.ch[c], old.terminal_off);
        let e = &self.eff[c];
        let lp = &e.loops;
        let i1 = if lp.active[SECT] {
            amps * lp.bridge / (lp.bridge + lp.r[SECT])
        } else {
            amps
        };
        e.set_currents(&mut self.y.ch[c], &[amps, i1, 0.0]);
        let no_snubber = self.params[c].snubber.is_none();
        self.blocked[c] = amps == 0.0 && no_snubber && !self.gate[c];
        let off = e.open || (self.blocked[c] && no_snubber && !self.gate[c]);
        let w_new = e.stored(&self.y.ch[c], off);
        self.st[c].removed += w_old - w_new;
        self.k1_valid = false;
        self.emit(c, EventKind::CurrentSet(amps), self.now_ns);
        self.update_peaks(c);
        Ok(())
    }

    /// Rebuild a channel's constants for new faults / magnetics, keeping
    /// the loop currents continuous.
    fn rebuild(&mut self, c: usize, f: FaultSet, mag: Magnetics) {
        let old = self.op(c);
        let old_il = self.eff[c].currents(&self.y.ch[c], old.terminal_off);
        let old_simple = self.eff[c].plain();
        let had_section = self.eff[c].loops.active[SECT];
        let was_open = self.eff[c].open;
        let w_old = if old_simple {
            0.5 * old.l * old.i * old.i
        } else {
            self.eff[c].stored(&self.y.ch[c], old.terminal_off)
        };
        self.faults[c] = f;
        self.mag[c] = mag;
        self.eff[c] = Eff::new(&self.params[c], &f, &mag);
        let e = &self.eff[c];
        let y = &mut self.y.ch[c];
        let i_new = if e.open || was_open { 0.0 } else { old.i };
        let w_new = if e.plain() && old_simple {
            let (l_new, _) = e.inductance(y[plant::POS] / e.stroke);
            y[plant::LAM] = l_new * i_new;
            0.5 * l_new * i_new * i_new
        } else {
            let i1 = if had_section { old_il[SECT] } else { i_new };
            e.set_currents(y, &[i_new, i1, old_il[EDDY]]);
            let no_snubber = self.params[c].snubber.is_none();
            let off = e.open || (self.blocked[c] && no_snubber && !self.gate[c]);
            e.stored(y, off)
        };
        self.st[c].removed += w_old - w_new;
        if !e.moving {
            if let Mechanics::Moving(a) = self.params[c].mechanics {
                let v = y[plant::VEL];
                self.st[c].removed += 0.5 * a.mass_kg * v * v;
            }
            y[plant::VEL] = 0.0;
        }
        self.k1_valid = false;
    }
}
