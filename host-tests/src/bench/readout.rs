//! Read-out of a bench: probes, energy bookkeeping, statistics.

use super::{Bench, R_ERES, R_ESRC};
use crate::energy::{Energy, SupplyEnergy};
use crate::observe::{ArmatureState, ChannelStats, Probe};
use crate::params::{Mechanics, SimError, Topology};
use crate::plant;

impl<const N: usize> Bench<N> {
    /// Instantaneous quantities of a channel.
    pub fn probe(&self, ch: usize) -> Result<Probe, SimError> {
        self.check_ch(ch)?;
        Ok(self.probe_unchecked(ch))
    }

    pub(super) fn probe_unchecked(&self, c: usize) -> Probe {
        let op = self.op(c);
        let il = self.eff[c].currents(&self.y.ch[c], op.terminal_off);
        let vp = self.rail_volts();
        let n = op.node;
        let node_volts = match self.params[c].topology {
            Topology::LowSide => n.w,
            Topology::HighSide => vp - n.w,
        };
        Probe {
            t_ns: self.now_ns,
            coil_amps: op.i,
            switch_amps: n.i_sw,
            clamp_amps: n.i_cl,
            snubber_amps: n.i_sn,
            switch_volts: n.w - n.i_sw * self.params[c].sense_ohms,
            node_volts,
            clamp_volts: n.w - vp,
            rail_volts: vp,
            position: op.x,
            velocity_m_per_s: self.y.ch[c][plant::VEL],
            inductance_henries: op.l,
            section_amps: il[crate::magnetics::SECT],
            eddy_amps: il[crate::magnetics::EDDY],
            magnetic_force_newtons: op.force,
            gate_on: self.gate[c],
            armature: self.st[c].armature,
        }
    }

    /// Energy bookkeeping of a channel.
    pub fn energy(&self, ch: usize) -> Result<Energy, SimError> {
        self.check_ch(ch)?;
        let c = ch;
        let y = &self.y.ch[c];
        let op = self.op(c);
        let e = &self.eff[c];
        let cap = match self.params[c].snubber {
            Some(s) => 0.5 * s.farads * y[plant::VC] * y[plant::VC],
            None => 0.0,
        };
        let (kin, spring) = match self.params[c].mechanics {
            Mechanics::Moving(a) => (
                0.5 * a.mass_kg * y[plant::VEL] * y[plant::VEL],
                e.spring_energy(y[plant::POS]),
            ),
            Mechanics::Fixed { .. } => (0.0, 0.0),
        };
        Ok(Energy {
            from_rail: y[plant::E_RAIL],
            winding: y[plant::E_WIND],
            bridge: y[plant::E_BRIDGE],
            eddy: y[plant::E_EDDY],
            wiring: y[plant::E_WIRE],
            sense: y[plant::E_SENSE],
            switch_conduction: y[plant::E_SWC],
            switch_avalanche: y[plant::E_SWA],
            clamp: y[plant::E_CLAMP],
            snubber_resistor: y[plant::E_SNUB],
            mechanical_work: y[plant::E_MECH],
            damping: y[plant::E_DAMP],
            impact: self.st[c].impact,
            removed_by_events: self.st[c].removed,
            magnetic_stored: if e.plain() {
                0.5 * op.l * op.i * op.i
            } else {
                e.stored(y, op.terminal_off)
            },
            capacitor_stored: cap,
            kinetic: kin,
            spring,
        })
    }

    /// Energy bookkeeping summed over all channels (field by field).
    pub fn energy_total(&self) -> Energy {
        let mut t = Energy::default();
        for c in 0..N {
            if let Ok(e) = self.energy(c) {
                t.from_rail += e.from_rail;
                t.winding += e.winding;
                t.bridge += e.bridge;
                t.eddy += e.eddy;
                t.wiring += e.wiring;
                t.sense += e.sense;
                t.switch_conduction += e.switch_conduction;
                t.switch_avalanche += e.switch_avalanche;
                t.clamp += e.clamp;
                t.snubber_resistor += e.snubber_resistor;
                t.mechanical_work += e.mechanical_work;
                t.damping += e.damping;
                t.impact += e.impact;
                t.removed_by_events += e.removed_by_events;
                t.magnetic_stored += e.magnetic_stored;
                t.capacitor_stored += e.capacitor_stored;
                t.kinetic += e.kinetic;
                t.spring += e.spring;
            }
        }
        t
    }

    /// Supply-side energy bookkeeping.
    pub fn supply_energy(&self) -> SupplyEnergy {
        let v = self.rail_volts();
        SupplyEnergy {
            from_source: self.y.rail[R_ESRC],
            source_resistor: self.y.rail[R_ERES],
            bulk_stored: 0.5 * self.supply.bulk_farads * v * v,
        }
    }

    /// Running extremes and event times of a channel.
    pub fn stats(&self, ch: usize) -> Result<ChannelStats, SimError> {
        self.check_ch(ch)?;
        Ok(self.st[ch].stats)
    }

    /// Reset the running extremes (peaks) of a channel; event times are kept.
    pub fn reset_stats(&mut self, ch: usize) -> Result<(), SimError> {
        self.check_ch(ch)?;
        let s = &mut self.st[ch].stats;
        s.peak_switch_volts = f64::NEG_INFINITY;
        s.peak_node_volts = f64::NEG_INFINITY;
        s.min_node_volts = f64::INFINITY;
        s.peak_coil_amps = f64::NEG_INFINITY;
        self.update_peaks(ch);
        Ok(())
    }

    /// Armature state of a channel.
    pub fn armature(&self, ch: usize) -> Result<ArmatureState, SimError> {
        self.check_ch(ch)?;
        Ok(self.st[ch].armature)
    }
}
