//! The free-level rise `y_k = P − A·e^(−r·x_k)` fitted by the general-purpose
//! `levenberg-marquardt` crate in f64: the outside reference the free-level fit (both of its
//! arithmetics) is measured against. `x` in any unit (seconds, sample periods), `r` its inverse.

use levenberg_marquardt::{LeastSquaresProblem, LevenbergMarquardt};
use nalgebra::{storage::Owned, Dyn, OMatrix, OVector, U3};

struct Free<'a> {
    x: &'a [f64],
    y: &'a [f64],
    p: OVector<f64, U3>,
}

impl LeastSquaresProblem<f64, Dyn, U3> for Free<'_> {
    type ResidualStorage = Owned<f64, Dyn>;
    type JacobianStorage = Owned<f64, Dyn, U3>;
    type ParameterStorage = Owned<f64, U3>;
    fn set_params(&mut self, p: &OVector<f64, U3>) {
        self.p.copy_from(p);
    }
    fn params(&self) -> OVector<f64, U3> {
        self.p
    }
    fn residuals(&self) -> Option<OVector<f64, Dyn>> {
        let (p, a, r) = (self.p[0], self.p[1], self.p[2]);
        Some(OVector::<f64, Dyn>::from_iterator(
            self.y.len(),
            self.x
                .iter()
                .zip(self.y)
                .map(|(x, y)| p - a * (-r * x).exp() - y),
        ))
    }
    fn jacobian(&self) -> Option<OMatrix<f64, Dyn, U3>> {
        let (a, r) = (self.p[1], self.p[2]);
        let mut j = OMatrix::<f64, Dyn, U3>::zeros(self.y.len());
        for (i, x) in self.x.iter().enumerate() {
            let e = (-r * x).exp();
            j[(i, 0)] = 1.0;
            j[(i, 1)] = -e;
            j[(i, 2)] = a * x * e;
        }
        Some(j)
    }
}

/// (P, A, r) of the least-squares fit from `start`, or `None` if it did not converge.
pub fn free_level_lm(x: &[f64], y: &[f64], start: (f64, f64, f64)) -> Option<(f64, f64, f64)> {
    let problem = Free {
        x,
        y,
        p: OVector::<f64, U3>::new(start.0, start.1, start.2),
    };
    let (solved, report) = LevenbergMarquardt::new().minimize(problem);
    report
        .termination
        .was_successful()
        .then(|| (solved.p[0], solved.p[1], solved.p[2]))
}
