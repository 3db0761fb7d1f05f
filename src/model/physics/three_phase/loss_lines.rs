//! Loss lines: one device's loss terms, shared by both modulation families.

// ---------------------------------------------------------------------------------------------
// Loss lines
// ---------------------------------------------------------------------------------------------

/// Loss lines of one switch (channel + body diode), averaged over the electrical period.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct LossLines {
    /// Channel conduction with drain→source current.
    pub conduction_forward_w: f64,
    /// Channel conduction with source→drain current (synchronous rectification).
    pub conduction_reverse_w: f64,
    /// Body-diode conduction (dead times; six-step freewheel).
    pub body_diode_w: f64,
    /// Hard-switching crossover losses (E_on + E_off).
    pub switching_w: f64,
    /// Reverse recovery, as the switch turning on against a diode and as the recovering diode.
    pub reverse_recovery_w: f64,
    /// Output-capacitance energy dumped at hard turn-on.
    pub output_capacitance_w: f64,
    /// Gate-drive share in the internal gate resistance.
    pub gate_internal_w: f64,
    /// Six-step only: hard turn-off when the device's phase is commutated out.
    pub commutation_w: f64,
}

impl LossLines {
    /// Sum of the lines.
    pub fn total_w(&self) -> f64 {
        self.conduction_forward_w
            + self.conduction_reverse_w
            + self.body_diode_w
            + self.switching_w
            + self.reverse_recovery_w
            + self.output_capacitance_w
            + self.gate_internal_w
            + self.commutation_w
    }

    /// Channel conduction, forward + reverse.
    pub fn conduction_w(&self) -> f64 {
        self.conduction_forward_w + self.conduction_reverse_w
    }

    pub(super) fn plus(&self, o: &LossLines) -> LossLines {
        LossLines {
            conduction_forward_w: self.conduction_forward_w + o.conduction_forward_w,
            conduction_reverse_w: self.conduction_reverse_w + o.conduction_reverse_w,
            body_diode_w: self.body_diode_w + o.body_diode_w,
            switching_w: self.switching_w + o.switching_w,
            reverse_recovery_w: self.reverse_recovery_w + o.reverse_recovery_w,
            output_capacitance_w: self.output_capacitance_w + o.output_capacitance_w,
            gate_internal_w: self.gate_internal_w + o.gate_internal_w,
            commutation_w: self.commutation_w + o.commutation_w,
        }
    }

    pub(super) fn scaled(&self, k: f64) -> LossLines {
        LossLines {
            conduction_forward_w: self.conduction_forward_w * k,
            conduction_reverse_w: self.conduction_reverse_w * k,
            body_diode_w: self.body_diode_w * k,
            switching_w: self.switching_w * k,
            reverse_recovery_w: self.reverse_recovery_w * k,
            output_capacitance_w: self.output_capacitance_w * k,
            gate_internal_w: self.gate_internal_w * k,
            commutation_w: self.commutation_w * k,
        }
    }
}
