//! A least-squares problem over the logarithms of its parameters, for the levenberg-marquardt
//! crate (MINPACK's algorithm): residuals from a closure, the Jacobian by forward differences
//! in the logarithms. Used by the compensation's joint fit and by the diagnosis.

use levenberg_marquardt::LeastSquaresProblem;
use nalgebra::{DMatrix, DVector, Dyn, VecStorage, U1};

/// The residuals at given logarithms (None if they cannot be computed).
pub type Residuals<'a> = &'a dyn Fn(&[f64]) -> Option<Vec<f64>>;

pub struct LogFit<'a> {
    residuals: Residuals<'a>,
    pub x: DVector<f64>,
    /// Where the logarithms started, and the weight of a pull back toward it per factor of e
    /// (0 for none: no rows are added).
    start: Vec<f64>,
    prior: f64,
}

impl<'a> LogFit<'a> {
    pub fn new(residuals: Residuals<'a>, x0: Vec<f64>, prior: f64) -> LogFit<'a> {
        LogFit { residuals, x: DVector::from_vec(x0.clone()), start: x0, prior }
    }

    fn all(&self, x: &[f64]) -> Option<Vec<f64>> {
        let mut r = (self.residuals)(x)?;
        if self.prior > 0.0 {
            r.extend(x.iter().zip(&self.start).map(|(a, b)| self.prior * (a - b)));
        }
        Some(r)
    }
}

impl LeastSquaresProblem<f64, Dyn, Dyn> for LogFit<'_> {
    type ResidualStorage = VecStorage<f64, Dyn, U1>;
    type JacobianStorage = VecStorage<f64, Dyn, Dyn>;
    type ParameterStorage = VecStorage<f64, Dyn, U1>;

    fn set_params(&mut self, x: &DVector<f64>) {
        self.x.copy_from(x);
    }

    fn params(&self) -> DVector<f64> {
        self.x.clone()
    }

    fn residuals(&self) -> Option<DVector<f64>> {
        self.all(self.x.as_slice()).map(DVector::from_vec)
    }

    fn jacobian(&self) -> Option<DMatrix<f64>> {
        jacobian(&|x| self.all(x), self.x.as_slice())
    }
}

/// Forward differences in the logarithms (a step of 1e-6, a millionth of the value).
pub fn jacobian(f: &dyn Fn(&[f64]) -> Option<Vec<f64>>, x: &[f64]) -> Option<DMatrix<f64>> {
    let base = f(x)?;
    let mut j = DMatrix::zeros(base.len(), x.len());
    let h = 1e-6;
    for k in 0..x.len() {
        let mut xk = x.to_vec();
        xk[k] += h;
        let r = f(&xk)?;
        for (i, (a, b)) in r.iter().zip(&base).enumerate() {
            j[(i, k)] = (a - b) / h;
        }
    }
    Some(j)
}
