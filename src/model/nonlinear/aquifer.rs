//! The aquifer of a groundwater model whose transmissivity follows the head: elevations per
//! cell, the smooth saturated thickness, storage of a water table, and the check that tells
//! when heads leave the range a model assumed (a confined aquifer drawn below its top, dry
//! cells).

use std::fmt;

use crate::error::Location;
use crate::format::Sig4;
use crate::model::Field;
use crate::operator::check_len;
use crate::{Error, Grid};

/// How an aquifer's saturated thickness follows the head.
///
/// ```
/// use quintet::model::{Aquifer, AquiferKind};
/// assert_eq!(Aquifer::unconfined(0.0).kind(), AquiferKind::Unconfined);
/// ```
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
pub enum AquiferKind {
    /// The full thickness `top − bottom` conducts whatever the head (the linear model);
    /// heads below the top are reported by [`Aquifer::check`], since the aquifer is then no
    /// longer confined there.
    Confined,
    /// A water table: the saturated thickness is `h − bottom` (smoothed near the bottom, see
    /// [`Aquifer::smoothing_width`]), with no top.
    Unconfined,
    /// Confined while the head is above the top (thickness `top − bottom`, elastic storage),
    /// a water table below it (thickness `h − bottom`, specific yield).
    Convertible,
}

/// Which saturated thickness a face between two cells uses.
///
/// ```
/// use quintet::model::{Aquifer, FaceWeighting};
/// assert_eq!(Aquifer::unconfined(0.0).face_weighting(), FaceWeighting::Upstream);
/// ```
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
pub enum FaceWeighting {
    /// The saturated thickness of the cell with the higher head, times the conductance of
    /// the two half-cells' conductivities in series: water flows out of a cell through the
    /// thickness it has, and into a dry cell from its wet neighbour, so dry cells rewet.
    /// The Picard matrix stays symmetric; the Newton matrix does not.
    Upstream,
    /// The two half-cells in series with their own transmissivity `K·b(h)` (the harmonic mean
    /// on equal cells): a face next to a dry cell nearly closes, so a dry cell rewets only
    /// through its own recharge or storage. Second-order on smooth fields.
    Harmonic,
}

/// The elevations and water-table properties of an aquifer, one value per cell or uniform
/// (elevations in m, in the datum of the heads).
///
/// **Saturated thickness.** For a water table the thickness is `b = h − bottom`, which
/// vanishes as a cell dries. quintet uses the smooth function
/// `b(h) = w·s((h − bottom)/w) − w·s((h − top)/w)` with `s(u) = ln(1 + eᵘ)` and `w` the
/// [`smoothing_width`](Aquifer::smoothing_width) (default 0.05 m; the second term only for a
/// convertible aquifer): it equals `h − bottom` to within `w·e^(−(h − bottom)/w)` above the
/// bottom and `top − h` within the same margin below the top, is `0.69·w` at the bottom, and
/// falls off like `w·e^((h − bottom)/w)` below it. Its slope lies between 0 and 1 and is
/// continuous, so the Newton system stays well posed as cells dry and rewet, and no cell
/// switches between a wet and a dry state from one outer iteration to the next. A floor of
/// `10⁻⁶·w` keeps every active cell connected.
///
/// ```
/// use quintet::model::Aquifer;
/// let sand = Aquifer::convertible(20.0, 0.0).specific_yield(0.2);
/// let b = sand.saturated_thickness(0, 12.0);
/// assert!((b - 12.0).abs() < 1e-6);
/// assert!(sand.saturated_thickness(0, -1.0) < 1e-6); // dry
/// # Ok::<(), quintet::Error>(())
/// ```
#[derive(Clone, Debug, PartialEq)]
pub struct Aquifer {
    top: Field,
    bottom: Field,
    kind: AquiferKind,
    width: f64,
    specific_yield: Field,
    faces: FaceWeighting,
    reduction: f64,
}

/// The default saturated thickness below which pumping is reduced, m.
const DEFAULT_REDUCTION: f64 = 1.0;

/// The default smoothing width of the saturated thickness, m.
const DEFAULT_WIDTH: f64 = 0.05;
/// The floor of the saturated thickness, as a fraction of the smoothing width.
const DRY_FLOOR: f64 = 1e-6;

impl Aquifer {
    /// A water table above `bottom` (m), with no top.
    ///
    /// ```
    /// let a = quintet::model::Aquifer::unconfined(-5.0);
    /// assert!((a.saturated_thickness(0, 5.0) - 10.0).abs() < 1e-6);
    /// ```
    pub fn unconfined(bottom: impl Into<Field>) -> Aquifer {
        Aquifer {
            top: Field::Uniform(f64::INFINITY),
            bottom: bottom.into(),
            kind: AquiferKind::Unconfined,
            width: DEFAULT_WIDTH,
            specific_yield: Field::Uniform(0.0),
            faces: FaceWeighting::Upstream,
            reduction: DEFAULT_REDUCTION,
        }
    }

    /// Confined above `top`, a water table below it, dry below `bottom` (m).
    ///
    /// ```
    /// let a = quintet::model::Aquifer::convertible(30.0, 0.0);
    /// assert!((a.saturated_thickness(0, 45.0) - 30.0).abs() < 1e-6);
    /// ```
    pub fn convertible(top: impl Into<Field>, bottom: impl Into<Field>) -> Aquifer {
        Aquifer {
            top: top.into(),
            kind: AquiferKind::Convertible,
            ..Aquifer::unconfined(bottom)
        }
    }

    /// Confined between `top` and `bottom` (m): transmissivity `K·(top − bottom)` whatever the
    /// head, and [`check`](Aquifer::check) reports heads below the top.
    ///
    /// ```
    /// let a = quintet::model::Aquifer::confined(30.0, 0.0);
    /// assert_eq!(a.saturated_thickness(0, 5.0), 30.0);
    /// ```
    pub fn confined(top: impl Into<Field>, bottom: impl Into<Field>) -> Aquifer {
        Aquifer {
            kind: AquiferKind::Confined,
            ..Aquifer::convertible(top, bottom)
        }
    }

    /// The smoothing width `w` of the saturated thickness (m, finite and > 0; default 0.05).
    /// Larger widths make drying smoother and the outer iteration easier, and misstate the
    /// thickness of cells within a few `w` of their bottom (or top).
    ///
    /// ```
    /// let a = quintet::model::Aquifer::unconfined(0.0).smoothing_width(0.2);
    /// assert!((a.saturated_thickness(0, 0.0) - 0.2 * 2f64.ln()).abs() < 1e-6);
    /// ```
    pub fn smoothing_width(mut self, width: f64) -> Aquifer {
        self.width = width;
        self
    }

    /// Specific yield (–, drainable porosity) of the water table, for transient runs
    /// (default 0). Elastic storage comes from the model's [`Storage`](crate::model::Storage).
    ///
    /// ```
    /// let a = quintet::model::Aquifer::unconfined(0.0).specific_yield(0.15);
    /// # let _ = a;
    /// ```
    pub fn specific_yield(mut self, sy: impl Into<Field>) -> Aquifer {
        self.specific_yield = sy.into();
        self
    }

    /// The saturated thickness `d` (m, finite and > 0; default 1) below which a pumping well
    /// (a point source with a negative rate) delivers less than its rate: the rate is
    /// multiplied by `t²·(3 − 2t)`, `t = min(b/d, 1)`, which falls smoothly to zero as the
    /// cell dries. Without it a well in a dry cell would go on pumping from nothing, and the
    /// head there would fall without bound. The budget shows the rate delivered.
    ///
    /// ```
    /// let a = quintet::model::Aquifer::unconfined(0.0).pumping_reduction(2.0);
    /// # let _ = a;
    /// ```
    pub fn pumping_reduction(mut self, thickness: f64) -> Aquifer {
        self.reduction = thickness;
        self
    }

    /// The factor on a pumping rate at saturated thickness `b` (slope `db/dh` given), and
    /// its slope with respect to the head.
    pub(crate) fn pumping_factor(&self, b: f64, db: f64) -> (f64, f64) {
        if self.kind == AquiferKind::Confined {
            return (1.0, 0.0);
        }
        let t = b / self.reduction;
        if t >= 1.0 {
            (1.0, 0.0)
        } else {
            let t = t.max(0.0);
            (
                t * t * (3.0 - 2.0 * t),
                6.0 * t * (1.0 - t) / self.reduction * db,
            )
        }
    }

    /// Choose the saturated thickness at faces (default [`FaceWeighting::Upstream`]).
    ///
    /// ```
    /// use quintet::model::{Aquifer, FaceWeighting};
    /// let a = Aquifer::unconfined(0.0).faces(FaceWeighting::Harmonic);
    /// assert_eq!(a.face_weighting(), FaceWeighting::Harmonic);
    /// ```
    pub fn faces(mut self, faces: FaceWeighting) -> Aquifer {
        self.faces = faces;
        self
    }

    /// The kind of aquifer.
    ///
    /// ```
    /// use quintet::model::{Aquifer, AquiferKind};
    /// assert_eq!(Aquifer::confined(1.0, 0.0).kind(), AquiferKind::Confined);
    /// ```
    pub fn kind(&self) -> AquiferKind {
        self.kind
    }

    /// The face weighting in use.
    ///
    /// ```
    /// use quintet::model::{Aquifer, FaceWeighting};
    /// assert_eq!(Aquifer::confined(1.0, 0.0).face_weighting(), FaceWeighting::Upstream);
    /// ```
    pub fn face_weighting(&self) -> FaceWeighting {
        self.faces
    }

    /// The saturated thickness of cell `k` at head `h` (m), as the model uses it.
    ///
    /// ```
    /// let a = quintet::model::Aquifer::unconfined(10.0);
    /// assert!((a.saturated_thickness(0, 14.0) - 4.0).abs() < 1e-6);
    /// ```
    pub fn saturated_thickness(&self, k: usize, h: f64) -> f64 {
        self.thickness(k, h).0
    }

    /// The saturated thickness and its slope `db/dh` at cell `k`.
    pub(crate) fn thickness(&self, k: usize, h: f64) -> (f64, f64) {
        let (top, bottom, w) = (self.top.at(k), self.bottom.at(k), self.width);
        match self.kind {
            AquiferKind::Confined => (top - bottom, 0.0),
            AquiferKind::Unconfined | AquiferKind::Convertible => {
                let lower = (h - bottom) / w;
                let mut b = w * softplus(lower);
                let mut slope = logistic(lower);
                if self.kind == AquiferKind::Convertible {
                    let upper = (h - top) / w;
                    b -= w * softplus(upper);
                    slope -= logistic(upper);
                }
                (b + DRY_FLOOR * w, slope)
            }
        }
    }

    /// Stored water per unit plan area above an arbitrary datum (m), and its slope, for a
    /// cell with elastic storage coefficient `elastic` (–) and specific yield `sy`:
    /// `S·h` for a confined aquifer, `S_y·b(h) + S·w·s((h − top)/w)` for a convertible one,
    /// `S_y·b(h)` for a water table.
    pub(crate) fn stored(&self, k: usize, h: f64, elastic: f64) -> (f64, f64) {
        let sy = self.specific_yield.at(k);
        match self.kind {
            AquiferKind::Confined => (elastic * h, elastic),
            AquiferKind::Unconfined => {
                let (b, db) = self.thickness(k, h);
                (sy * b, sy * db)
            }
            AquiferKind::Convertible => {
                let (b, db) = self.thickness(k, h);
                let upper = (h - self.top.at(k)) / self.width;
                let over = self.width * softplus(upper);
                (sy * b + elastic * over, sy * db + elastic * logistic(upper))
            }
        }
    }

    /// Check the fields against `grid` and their values at active cells.
    pub(crate) fn validate(&self, grid: Grid, active: &[bool]) -> Result<(), Error> {
        self.top.check_len("aquifer top", grid)?;
        self.bottom.check_len("aquifer bottom", grid)?;
        self.specific_yield.check_len("specific yield", grid)?;
        if !(self.reduction.is_finite() && self.reduction > 0.0) {
            return Err(Error::setting(
                "pumping reduction thickness",
                self.reduction,
                "finite and > 0 (m)",
            ));
        }
        if !(self.width.is_finite() && self.width > 0.0) {
            return Err(Error::setting(
                "smoothing width",
                self.width,
                "finite and > 0 (m)",
            ));
        }
        for k in (0..grid.cells()).filter(|&k| active[k]) {
            let at = Location::on(grid, k);
            let (top, bottom, sy) = (self.top.at(k), self.bottom.at(k), self.specific_yield.at(k));
            if !bottom.is_finite() {
                return Err(Error::property("aquifer bottom", at, bottom, "finite"));
            }
            let top_ok = top > bottom && (top.is_finite() || self.kind == AquiferKind::Unconfined);
            if !top_ok {
                return Err(Error::property(
                    "aquifer top",
                    at,
                    top,
                    "finite and above the aquifer bottom",
                ));
            }
            if !(sy.is_finite() && (0.0..=1.0).contains(&sy)) {
                return Err(Error::property("specific yield", at, sy, "between 0 and 1"));
            }
        }
        Ok(())
    }

    /// Where `heads` leave the range the model assumes: cells whose head is below the
    /// aquifer top (a confined aquifer is no longer confined there) and dry cells (head at or
    /// below the bottom plus the [`smoothing_width`](Aquifer::smoothing_width) `w`: a
    /// saturated thickness of at most `1.3·w`, where the smooth thickness takes over). Use it on the heads of any groundwater model, linear or not: a
    /// confined model with 46.9 m of drawdown in a 30 m thick aquifer solves without
    /// complaint, and this check is what shows it.
    ///
    /// # Errors
    ///
    /// [`ErrorKind::LengthMismatch`](crate::ErrorKind::LengthMismatch) for heads or fields of
    /// the wrong length.
    ///
    /// ```
    /// use quintet::{model::Aquifer, Grid};
    /// let grid = Grid::new(3, 1)?;
    /// let aquifer = Aquifer::confined(30.0, 0.0);
    /// let check = aquifer.check(grid, &[50.0, 13.1, -3.0])?;
    /// assert_eq!(check.below_top, vec![1, 2]);
    /// assert_eq!(check.dry, vec![2]);
    /// assert!(check.to_string().contains("no longer confined"));
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn check(&self, grid: Grid, heads: &[f64]) -> Result<AquiferCheck, Error> {
        check_len("heads", grid.cells(), heads.len())?;
        self.top.check_len("aquifer top", grid)?;
        self.bottom.check_len("aquifer bottom", grid)?;
        let mut check = AquiferCheck {
            kind: self.kind,
            below_top: Vec::new(),
            dry: Vec::new(),
            deepest_below_top: None,
            first_dry: None,
        };
        for (k, &h) in heads.iter().enumerate() {
            let (top, bottom) = (self.top.at(k), self.bottom.at(k));
            if top.is_finite() && h < top {
                check.below_top.push(k);
                let depth = top - h;
                if check.deepest_below_top.is_none_or(|(_, d)| depth > d) {
                    check.deepest_below_top = Some((Location::on(grid, k), depth));
                }
            }
            if h <= bottom + self.width {
                if check.dry.is_empty() {
                    check.first_dry = Some(Location::on(grid, k));
                }
                check.dry.push(k);
            }
        }
        Ok(check)
    }
}

/// What [`Aquifer::check`] found: the cells whose head is below the aquifer top and the dry
/// cells. Its `Display` is the warning to print.
///
/// ```
/// use quintet::{model::Aquifer, Grid};
/// let check = Aquifer::unconfined(0.0).check(Grid::new(2, 1)?, &[3.0, 4.0])?;
/// assert!(check.is_clear());
/// # Ok::<(), quintet::Error>(())
/// ```
#[derive(Clone, Debug, PartialEq)]
#[non_exhaustive]
pub struct AquiferCheck {
    /// The kind of aquifer checked.
    pub kind: AquiferKind,
    /// Cells whose head lies below the aquifer top, in increasing order.
    pub below_top: Vec<usize>,
    /// Dry cells, whose head lies at or below the aquifer bottom plus the smoothing width, in
    /// increasing order.
    pub dry: Vec<usize>,
    /// The cell whose head is furthest below the top, and by how much (m).
    pub deepest_below_top: Option<(Location, f64)>,
    /// The first dry cell.
    pub first_dry: Option<Location>,
}

impl AquiferCheck {
    /// Whether there is nothing to warn about: no dry cell, and (for a confined aquifer) no
    /// head below the top.
    ///
    /// ```
    /// use quintet::{model::Aquifer, Grid};
    /// let check = Aquifer::confined(10.0, 0.0).check(Grid::new(1, 1)?, &[8.0])?;
    /// assert!(!check.is_clear());
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn is_clear(&self) -> bool {
        self.dry.is_empty() && (self.kind != AquiferKind::Confined || self.below_top.is_empty())
    }
}

impl fmt::Display for AquiferCheck {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        if self.is_clear() {
            return write!(f, "no dry cells; heads within the aquifer's assumptions");
        }
        if let (AquiferKind::Confined, Some((at, depth))) = (self.kind, self.deepest_below_top) {
            writeln!(
                f,
                "warning: the head falls below the top of the confined aquifer in {} cells, by up to {} m at {at}: the aquifer is no longer confined there and its transmissivity is overstated; model it as convertible (Aquifer::convertible)",
                self.below_top.len(),
                Sig4(depth)
            )?;
        }
        match self.first_dry {
            None => write!(f, "no dry cells"),
            Some(at) => write!(
                f,
                "{} dry cells (head at most one smoothing width above the aquifer bottom), the first at {at}",
                self.dry.len()
            ),
        }
    }
}

/// `ln(1 + eᵘ)`, without overflow.
fn softplus(u: f64) -> f64 {
    u.max(0.0) + (-u.abs()).exp().ln_1p()
}

/// `1/(1 + e⁻ᵘ)`, the slope of [`softplus`].
fn logistic(u: f64) -> f64 {
    if u >= 0.0 {
        1.0 / (1.0 + (-u).exp())
    } else {
        let e = u.exp();
        e / (1.0 + e)
    }
}

/// Conductance of a face between `p` and `n` with half-resistances `[r_p, r_n]` at factor 1,
/// factors and slopes `fp`, `fn_`, values `xp`, `xn`; and its derivatives with respect to
/// `xp` and `xn` through the factors.
#[inline]
pub(super) fn face(
    rule: FaceWeighting,
    [rp, rn]: [f64; 2],
    (mp, sp): (f64, f64),
    (mn, sn): (f64, f64),
    xp: f64,
    xn: f64,
) -> (f64, f64, f64) {
    if !(rp.is_finite() && rn.is_finite()) {
        return (0.0, 0.0, 0.0);
    }
    match rule {
        FaceWeighting::Upstream => {
            let c0 = 1.0 / (rp + rn);
            if xp >= xn {
                (c0 * mp, c0 * sp, 0.0)
            } else {
                (c0 * mn, 0.0, c0 * sn)
            }
        }
        FaceWeighting::Harmonic => {
            let c = 1.0 / (rp / mp + rn / mn);
            (c, c * c * rp / (mp * mp) * sp, c * c * rn / (mn * mn) * sn)
        }
    }
}
