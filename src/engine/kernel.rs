//! Element impedances: what each element of a circuit is ([`ElementModel`]) and its
//! impedance as a function of frequency with the frequency-independent terms worked out once
//! ([`Kernel`]). Every impedance in voicekeep comes from here.

use num_complex::Complex64;
use std::f64::consts::PI;

use super::{driver, inv, C0};
use crate::model::{DriverModel, ImpedanceTable, Part, PartKind};

/// What an element of the circuit is, with everything needed for its impedance.
#[derive(Debug, Clone, PartialEq)]
pub enum ElementModel {
    Resistor { r: f64 },
    Capacitor { c: f64, esr: f64, tan_delta: Option<f64> },
    Inductor { l: f64, dcr: f64 },
    Driver(DriverModel),
}

impl ElementModel {
    pub fn from_part(p: &Part) -> Self {
        match p.kind {
            PartKind::Resistor => ElementModel::Resistor { r: p.value },
            PartKind::Capacitor => ElementModel::Capacitor { c: p.value, esr: p.esr, tan_delta: p.tan_delta },
            PartKind::Inductor => ElementModel::Inductor { l: p.value, dcr: p.dcr },
        }
    }

    /// Impedance at frequency `f_hz` (a sweep takes [`Kernel`]s once and evaluates those).
    pub fn impedance(&self, f_hz: f64) -> Complex64 {
        Kernel::of(self).at(f_hz)
    }

    /// The resistance in which this element dissipates (for a driver, the real part of its
    /// impedance: the power it takes from the network).
    pub fn loss_ohm(&self, f_hz: f64) -> f64 {
        self.impedance(f_hz).re
    }
}

/// An element's impedance model with what does not depend on frequency worked out once (a
/// capacitor's 1/C, Small's motional terms), so a sweep evaluating it at every point does
/// little more than multiply. Every impedance in voicekeep comes from here.
#[derive(Debug, Clone, Copy)]
pub enum Kernel<'a> {
    /// r + j w l: a resistor, an inductor with its DCR, a plain resistance, Re + Le.
    Series { r: f64, l: f64 },
    /// ESR (or tan delta / (w C)) - j / (w C).
    Capacitor { esr: f64, inv_c: f64, tan_delta: Option<f64> },
    /// Re, plus j w Le or Leach's K (j w)^n as `leach` = (K, n), plus Small's motional
    /// impedance 1 / (g + j (w cm - lf / w)) as `motional` = (g, cm, lf) = (1/Res, Cmes, 1/Lces).
    VoiceCoil { re: f64, le: f64, leach: Option<(f64, f64)>, motional: Option<(f64, f64, f64)> },
    /// A measured table, interpolated in log frequency.
    Table(&'a ImpedanceTable),
}

impl<'a> Kernel<'a> {
    pub fn of(m: &'a ElementModel) -> Kernel<'a> {
        match m {
            ElementModel::Resistor { r } => Kernel::Series { r: *r, l: 0.0 },
            ElementModel::Inductor { l, dcr } => Kernel::Series { r: *dcr, l: *l },
            ElementModel::Capacitor { c, esr, tan_delta } => Kernel::Capacitor { esr: *esr, inv_c: 1.0 / c, tan_delta: *tan_delta },
            ElementModel::Driver(d) => Kernel::of_driver(d),
        }
    }

    pub fn of_driver(d: &'a DriverModel) -> Kernel<'a> {
        use crate::model::VoiceCoilInductance as Vc;
        match d {
            DriverModel::Resistance(r) => Kernel::Series { r: *r, l: 0.0 },
            DriverModel::VoiceCoil { re, inductance, resonance } => {
                let (le, leach) = match inductance {
                    Vc::None => (0.0, None),
                    Vc::Simple(le) => (*le, None),
                    // Leach, JAES 50(6) 2002: Z = K (j w)^n.
                    Vc::Leach { k, n } => (0.0, Some((*k, *n))),
                };
                // Small, JAES 20(5) 1972: Res = Re Qms/Qes, Lces = Re/(2 pi fs Qes), Cmes = Qes/(2 pi fs Re).
                let motional = resonance.as_ref().map(|r| (r.qes / (re * r.qms), r.qes / (2.0 * PI * r.fs * re), 2.0 * PI * r.fs * r.qes / re));
                match (leach, motional) {
                    (None, None) => Kernel::Series { r: *re, l: le },
                    _ => Kernel::VoiceCoil { re: *re, le, leach, motional },
                }
            }
            DriverModel::Table(t) => Kernel::Table(t),
        }
    }

    /// Impedance at `f_hz`.
    #[inline]
    pub fn at(&self, f_hz: f64) -> Complex64 {
        let w = 2.0 * PI * f_hz;
        match *self {
            Kernel::Series { r, l } => Complex64::new(r, w * l),
            Kernel::Capacitor { esr, inv_c, tan_delta } => {
                let x = inv_c / w;
                Complex64::new(tan_delta.map_or(esr, |d| d * x), -x)
            }
            Kernel::VoiceCoil { re, le, leach, motional } => {
                // K (j w)^n = K w^n (cos(n pi/2) + j sin(n pi/2)).
                let coil = match leach {
                    Some((k, n)) => Complex64::from_polar(k * w.powf(n), n * PI / 2.0),
                    None => Complex64::new(0.0, w * le),
                };
                let zm = match motional {
                    Some((g, cm, lf)) => inv(Complex64::new(g, w * cm - lf / w)),
                    None => C0,
                };
                Complex64::new(re, 0.0) + coil + zm
            }
            Kernel::Table(t) => driver::table_impedance(t, f_hz),
        }
    }
}
