//! Energy bookkeeping reported by the bench (per channel and for the supply).

/// Energy bookkeeping of one channel, joules, cumulative since the bench was
/// built (sinks) or present values (stored).
///
/// Balance (what [`Energy::balance_error_since`] checks):
/// `Δfrom_rail = Δ(magnetic + capacitor + kinetic + spring) + Δ(all sinks)`,
/// and mechanically `Δmechanical_work = Δ(kinetic + spring) + Δ(damping + impact)`.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct Energy {
    /// Delivered by the rail into this channel (`∫ V+·i_switch dt`).
    pub from_rail: f64,
    /// Heat in the winding resistance (all its turns, a shorted section's
    /// included).
    pub winding: f64,
    /// Heat in the insulation-fault bridge of a shorted section.
    pub bridge: f64,
    /// Heat in the eddy-current loop.
    pub eddy: f64,
    /// Heat in wiring and added series resistance.
    pub wiring: f64,
    /// Heat in the sense resistor.
    pub sense: f64,
    /// Switch loss while conducting (on-state, body diode).
    pub switch_conduction: f64,
    /// Switch loss in avalanche (off-state breakdown).
    pub switch_avalanche: f64,
    /// Energy into the clamp.
    pub clamp: f64,
    /// Heat in the snubber resistor.
    pub snubber_resistor: f64,
    /// Work of the magnetic force on the armature (`∫ F·v dt`).
    pub mechanical_work: f64,
    /// Viscous damping loss.
    pub damping: f64,
    /// Lost at stop impacts (kinetic energy not returned by restitution).
    pub impact: f64,
    /// Removed by discrete events: faults that change the coil, the
    /// current floor, and end-stop projection corrections.
    pub removed_by_events: f64,
    /// Stored in the magnetic field now: `½·L(x)·i²` for a linear coil,
    /// `iᵀλ − W'` with coupled loops or saturation ([`crate::magnetics`]).
    pub magnetic_stored: f64,
    /// Stored in the snubber capacitor now, `½·C·vc²`.
    pub capacitor_stored: f64,
    /// Kinetic energy of the armature now, `½·m·v²`.
    pub kinetic: f64,
    /// Return-spring energy now, `F0·p + ½·k·p²`.
    pub spring: f64,
}

impl Energy {
    /// Sum of all sinks (J).
    pub fn dissipated(&self) -> f64 {
        self.winding
            + self.bridge
            + self.eddy
            + self.wiring
            + self.sense
            + self.switch_conduction
            + self.switch_avalanche
            + self.clamp
            + self.snubber_resistor
            + self.damping
            + self.impact
            + self.removed_by_events
    }

    /// Sum of stored energies (J).
    pub fn stored(&self) -> f64 {
        self.magnetic_stored + self.capacitor_stored + self.kinetic + self.spring
    }

    /// Energy not accounted for between `start` and `self`, J:
    /// `Δfrom_rail − Δstored − Δdissipated`. Zero up to integration error.
    pub fn balance_error_since(&self, start: &Energy) -> f64 {
        (self.from_rail - start.from_rail)
            - (self.stored() - start.stored())
            - (self.dissipated() - start.dissipated())
    }

    /// Mechanical balance error between `start` and `self`, J:
    /// `Δwork − Δ(kinetic + spring) − Δ(damping + impact)`.
    pub fn mechanical_error_since(&self, start: &Energy) -> f64 {
        (self.mechanical_work - start.mechanical_work)
            - (self.kinetic + self.spring - start.kinetic - start.spring)
            - (self.damping + self.impact - start.damping - start.impact)
    }
}

/// Energy bookkeeping of the supply (J).
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct SupplyEnergy {
    /// Delivered by the ideal source.
    pub from_source: f64,
    /// Heat in the source resistance.
    pub source_resistor: f64,
    /// Stored in the bulk capacitor now.
    pub bulk_stored: f64,
}
