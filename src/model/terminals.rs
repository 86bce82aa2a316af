//! Impedance sweeps measured at the speaker's terminals, before the work (as found) and after
//! it (as left), and the limits a prediction is confirmed within.

use super::ImpedanceTable;

/// How close a prediction must come to a sweep to be confirmed. The defaults are common
/// practice for a sound-card rig with a sense resistor, whose readings are good to a few per
/// cent and a few degrees.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
pub struct TerminalLimits {
    pub z_rms_pct: f64,
    pub z_worst_pct: f64,
    pub phase_rms_deg: f64,
}

impl Default for TerminalLimits {
    fn default() -> Self {
        TerminalLimits { z_rms_pct: 3.0, z_worst_pct: 10.0, phase_rms_deg: 5.0 }
    }
}

#[derive(Debug, Clone, PartialEq, Default)]
pub struct Terminals {
    pub as_found: Option<ImpedanceTable>,
    pub as_left: Option<ImpedanceTable>,
    pub limits: TerminalLimits,
    /// Where each sweep is named, and its field, for messages.
    pub places: Vec<(crate::diag::Pos, String)>,
    /// What to estimate from the as-found sweep: `C1` (its value and loss) or `C1.esr`, each
    /// with where it is written; empty with `diagnose_all`.
    pub diagnose: Vec<(String, crate::diag::Pos, String)>,
    pub diagnose_all: bool,
}

impl Terminals {
    pub fn is_empty(&self) -> bool {
        self.as_found.is_none() && self.as_left.is_none()
    }
}
