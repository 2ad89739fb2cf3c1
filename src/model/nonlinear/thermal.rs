//! Heat conduction with a conductivity that depends on temperature ([`ConductivityLaw`]) and
//! radiation exchange at an edge ([`STEFAN_BOLTZMANN`]).

use crate::Error;

/// The Stefan–Boltzmann constant σ, W/(m²·K⁴): `5.670374419 × 10⁻⁸`, exact in the SI since
/// 2019 (CODATA 2018 recommended values; Tiesinga et al. 2021, *Rev. Mod. Phys.* 93, 025010;
/// value from memory).
///
/// ```
/// // A black body at 300 K emits about 459 W/m².
/// let e = quintet::model::STEFAN_BOLTZMANN * 300f64.powi(4);
/// assert!((e - 459.3).abs() < 0.1);
/// ```
pub const STEFAN_BOLTZMANN: f64 = 5.670_374_419e-8;

/// How the thermal conductivity of every cell varies with temperature, as a factor on the
/// model's conductivity: `k(T) = k_model·f(T)`.
///
/// * [`linear`](ConductivityLaw::linear): `f(T) = 1 + β·(T − T_ref)` (held at `10⁻⁶` where it
///   would fall below that);
/// * [`table`](ConductivityLaw::table): `f` interpolated linearly between tabulated points,
///   and constant beyond the first and last.
///
/// ```
/// use quintet::model::ConductivityLaw;
/// let law = ConductivityLaw::linear(2e-3, 0.0)?; // k = k0·(1 + 0.002·T)
/// assert!((law.factor(100.0) - 1.2).abs() < 1e-12);
/// let table = ConductivityLaw::table(vec![(0.0, 1.0), (100.0, 0.8)])?;
/// assert!((table.factor(50.0) - 0.9).abs() < 1e-12);
/// # Ok::<(), quintet::Error>(())
/// ```
#[derive(Clone, Debug, PartialEq)]
pub struct ConductivityLaw {
    shape: Shape,
}

#[derive(Clone, Debug, PartialEq)]
enum Shape {
    Linear { beta: f64, reference: f64 },
    Table(Vec<(f64, f64)>),
}

/// The smallest factor a law gives.
const FLOOR: f64 = 1e-6;

impl ConductivityLaw {
    /// `f(T) = 1 + β·(T − T_ref)`: β in 1/K, `T_ref` the temperature at which the model's
    /// conductivity holds.
    ///
    /// # Errors
    ///
    /// [`ErrorKind::InvalidSetting`](crate::ErrorKind::InvalidSetting) for a β or `T_ref`
    /// that is not finite.
    ///
    /// ```
    /// assert!(quintet::model::ConductivityLaw::linear(f64::NAN, 0.0).is_err());
    /// ```
    pub fn linear(beta: f64, reference: f64) -> Result<ConductivityLaw, Error> {
        if !beta.is_finite() {
            return Err(Error::setting("beta", beta, "finite (1/K)"));
        }
        if !reference.is_finite() {
            return Err(Error::setting("reference temperature", reference, "finite"));
        }
        Ok(ConductivityLaw {
            shape: Shape::Linear { beta, reference },
        })
    }

    /// `f` interpolated between `(temperature, factor)` points, given in increasing
    /// temperature.
    ///
    /// # Errors
    ///
    /// [`ErrorKind::InvalidSetting`](crate::ErrorKind::InvalidSetting) for an empty table,
    /// temperatures that do not increase, or a factor that is not finite and positive.
    ///
    /// ```
    /// use quintet::model::ConductivityLaw;
    /// assert!(ConductivityLaw::table(vec![(10.0, 1.0), (5.0, 1.1)]).is_err());
    /// ```
    pub fn table(points: Vec<(f64, f64)>) -> Result<ConductivityLaw, Error> {
        if points.is_empty() {
            return Err(Error::setting(
                "conductivity table",
                0.0,
                "at least one point",
            ));
        }
        for (n, &(t, f)) in points.iter().enumerate() {
            if !(t.is_finite() && f.is_finite() && f > 0.0) {
                return Err(Error::setting(
                    "conductivity table",
                    n as f64,
                    "finite temperatures and finite positive factors (the value is the point's index)",
                ));
            }
            if n > 0 && t <= points[n - 1].0 {
                return Err(Error::setting(
                    "conductivity table",
                    n as f64,
                    "temperatures in increasing order (the value is the point's index)",
                ));
            }
        }
        Ok(ConductivityLaw {
            shape: Shape::Table(points),
        })
    }

    /// The factor at temperature `t`.
    ///
    /// ```
    /// let law = quintet::model::ConductivityLaw::linear(-1e-3, 20.0)?;
    /// assert!((law.factor(120.0) - 0.9).abs() < 1e-12);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn factor(&self, t: f64) -> f64 {
        self.factor_and_slope(t).0
    }

    /// The factor and its slope `df/dT`.
    pub(crate) fn factor_and_slope(&self, t: f64) -> (f64, f64) {
        match &self.shape {
            Shape::Linear { beta, reference } => {
                let f = 1.0 + beta * (t - reference);
                if f > FLOOR {
                    (f, *beta)
                } else {
                    (FLOOR, 0.0)
                }
            }
            Shape::Table(points) => {
                let after = points.partition_point(|&(pt, _)| pt <= t);
                match (after, points.get(after)) {
                    (0, _) => (points[0].1, 0.0),
                    (_, None) => (points[points.len() - 1].1, 0.0),
                    (n, Some(&(t1, f1))) => {
                        let (t0, f0) = points[n - 1];
                        let slope = (f1 - f0) / (t1 - t0);
                        (f0 + slope * (t - t0), slope)
                    }
                }
            }
        }
    }
}
