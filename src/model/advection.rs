//! Heat (or any modelled quantity) carried by a given flow field: the face flows
//! ([`FaceFlows`]), the weighting of the two neighbours at a face ([`AdvectionScheme`]), and
//! the neighbour coefficients the assembly takes from them.
//!
//! At a face with diffusion conductance `D` (W/K) and carried flow `F` (W/K, positive out of
//! the cell), the cell's neighbour coefficient is `a_nb = D·A(|P|) + max(−F, 0)` with the
//! face Péclet number `P = F/D` (Patankar 1980, *Numerical Heat Transfer and Fluid Flow*,
//! §5.3–5.4, eqs. 5.58 ff.; from memory). The total flux through the face, out of the cell,
//! is `J = F·φ_P + a_nb·(φ_P − φ_nb)`, the same number seen from either side, so the scheme
//! conserves exactly.

use super::geometry::Geometry;
use crate::error::Location;
use crate::stencil::check_grid;
use crate::{Error, Grid, Side};

/// How the value carried through a face is weighted between the two cells beside it: the
/// function `A(|P|)` of the face Péclet number `P = F/D` (carried flow over diffusion
/// conductance) in `a_nb = D·A(|P|) + max(−F, 0)`. The table is Patankar 1980, *Numerical Heat
/// Transfer and Fluid Flow*, Table 5.2, written down from memory.
///
/// | scheme | `A(|P|)` | accuracy and range |
/// |---|---|---|
/// | [`Upwind`](AdvectionScheme::Upwind) | `1` | first order where advection matters; never oscillates |
/// | [`Central`](AdvectionScheme::Central) | `1 − 0.5·|P|` | second order; negative coefficients and wiggles for `|P| > 2` |
/// | [`Exponential`](AdvectionScheme::Exponential) | `|P| / (e^|P| − 1)` | exact for 1-D steady advection–diffusion with uniform properties |
/// | [`PowerLaw`](AdvectionScheme::PowerLaw) | `max(0, (1 − 0.1·|P|)⁵)` | close to exponential (see the tests' measured deviation), cheaper |
///
/// All four give `A(0) = 1`, plain conduction, so a zero flow field changes nothing.
///
/// ```
/// use quintet::model::AdvectionScheme;
/// assert_eq!(AdvectionScheme::Upwind.weight(7.0), 1.0);
/// assert_eq!(AdvectionScheme::Central.weight(1.0), 0.5);
/// assert!((AdvectionScheme::Exponential.weight(1.0) - 1.0 / (1f64.exp() - 1.0)).abs() < 1e-15);
/// assert_eq!(AdvectionScheme::PowerLaw.weight(12.0), 0.0);
/// ```
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash, Default)]
pub enum AdvectionScheme {
    /// The upstream cell's value is carried: `A = 1`. Monotone at any Péclet number.
    #[default]
    Upwind,
    /// The mean of the two cells' values is carried: `A = 1 − |P|/2`. Use only where the cell
    /// Péclet number stays below 2.
    Central,
    /// The exact 1-D profile between the two nodes: `A = |P|/(e^|P| − 1)`.
    Exponential,
    /// Patankar's power-law fit of the exponential: `A = max(0, (1 − 0.1·|P|)⁵)`.
    PowerLaw,
}

impl AdvectionScheme {
    /// `A(|p|)`, the weight of diffusion at a face with Péclet number `p`.
    ///
    /// ```
    /// use quintet::model::AdvectionScheme;
    /// for scheme in [AdvectionScheme::Upwind, AdvectionScheme::Central, AdvectionScheme::Exponential, AdvectionScheme::PowerLaw] {
    ///     assert_eq!(scheme.weight(0.0), 1.0);
    /// }
    /// ```
    pub fn weight(self, p: f64) -> f64 {
        let p = p.abs();
        match self {
            AdvectionScheme::Upwind => 1.0,
            AdvectionScheme::Central => 1.0 - 0.5 * p,
            AdvectionScheme::Exponential if p == 0.0 => 1.0,
            AdvectionScheme::Exponential => p / p.exp_m1(),
            AdvectionScheme::PowerLaw => {
                let t = (1.0 - 0.1 * p).max(0.0);
                t * t * t * t * t
            }
        }
    }

    /// The neighbour coefficient `a_nb = D·A(|F/D|) + max(−F, 0)` of a face with diffusion
    /// conductance `d` and carried flow `f` out of the cell; exactly `d` when `f` is zero.
    pub(crate) fn coefficient(self, d: f64, f: f64) -> f64 {
        if f == 0.0 {
            d
        } else if d > 0.0 {
            d * self.weight(f / d) + (-f).max(0.0)
        } else {
            (-f).max(0.0)
        }
    }
}

/// The flow that carries the modelled quantity, given through every face of the grid as a
/// heat-capacity flow rate in W/K: the volumetric flow through the face (m³/s) times the
/// fluid's volumetric heat capacity `ρ_w·c_w` (J/(m³·K)). Positive towards the east on the
/// x-faces and towards the north on the y-faces.
///
/// * x-faces: `(nx + 1)·ny` values, face `(i, j)` at index `i + (nx + 1)·j`, the west face of
///   cell `(i, j)` (face `nx` is the east face of the last cell);
/// * y-faces: `nx·(ny + 1)` values, face `(i, j)` at index `i + nx·j`, the south face of cell
///   `(i, j)` (row `ny` is the north face of the top row).
///
/// Flows through whole faces are the mass-conservative form: a field from a groundwater solve
/// (its face flows times `ρ_w·c_w`) keeps its balance exactly, cell by cell. Where the field is
/// not divergence-free (wells, recharge), see the module docs' Advection section.
///
/// # Example
///
/// ```
/// use quintet::model::{FaceFlows, Geometry};
/// use quintet::Grid;
///
/// // A 3 x 2 grid with 0.5 W/K flowing east through every x-face and nothing north–south.
/// let grid = Grid::new(3, 2)?;
/// let flows = FaceFlows::new(grid, vec![0.5; 4 * 2], vec![0.0; 3 * 3])?;
/// assert_eq!(flows.x_face(3, 1), 0.5);
///
/// // The same from a uniform Darcy flux: 1e-6 m/s east, water ρ·c ≈ 4.18e6 J/(m³·K).
/// let geometry = Geometry::cell_centered(3, 2, 10.0, 10.0, 2.0)?;
/// let darcy = FaceFlows::uniform(&geometry, 1e-6, 0.0, 4.18e6)?;
/// assert!((darcy.x_face(0, 0) - 1e-6 * 4.18e6 * 20.0).abs() < 1e-12);
/// # Ok::<(), quintet::Error>(())
/// ```
#[derive(Clone, Debug, PartialEq)]
pub struct FaceFlows {
    grid: Grid,
    x: Vec<f64>,
    y: Vec<f64>,
}

impl FaceFlows {
    /// Face flows (W/K) from the x-faces (`(nx + 1)·ny` values) and the y-faces
    /// (`nx·(ny + 1)` values), in the layout of the type's docs.
    ///
    /// # Errors
    ///
    /// [`ErrorKind::LengthMismatch`](crate::ErrorKind::LengthMismatch) naming the list of the
    /// wrong length, [`ErrorKind::NonFinite`](crate::ErrorKind::NonFinite) naming the face (its
    /// side and the cell it belongs to).
    ///
    /// ```
    /// use quintet::{model::FaceFlows, ErrorKind, Grid};
    /// let grid = Grid::new(2, 2)?;
    /// let err = FaceFlows::new(grid, vec![0.0; 4], vec![0.0; 6]).unwrap_err();
    /// assert_eq!(err.kind(), ErrorKind::LengthMismatch);
    /// let mut y = vec![0.0; 6];
    /// y[5] = f64::NAN; // the north face of cell (1, 1)
    /// let err = FaceFlows::new(grid, vec![0.0; 6], y).unwrap_err();
    /// assert_eq!(err.location().map(|at| at.cell), Some(3));
    /// assert!(err.to_string().contains("north face"));
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn new(grid: Grid, x_faces: Vec<f64>, y_faces: Vec<f64>) -> Result<FaceFlows, Error> {
        let (nx, ny) = (grid.nx(), grid.ny());
        if x_faces.len() != (nx + 1) * ny {
            return Err(Error::length(
                "flows through the x-faces ((nx + 1)·ny)",
                (nx + 1) * ny,
                x_faces.len(),
            ));
        }
        if y_faces.len() != nx * (ny + 1) {
            return Err(Error::length(
                "flows through the y-faces (nx·(ny + 1))",
                nx * (ny + 1),
                y_faces.len(),
            ));
        }
        if let Some(f) = x_faces.iter().position(|v| !v.is_finite()) {
            let (i, j) = (f % (nx + 1), f / (nx + 1));
            let (what, i) = if i < nx {
                ("flow through the west face", i)
            } else {
                ("flow through the east face", nx - 1)
            };
            return Err(Error::non_finite(
                what,
                Location::on(grid, grid.index(i, j)),
            ));
        }
        if let Some(f) = y_faces.iter().position(|v| !v.is_finite()) {
            let (i, j) = (f % nx, f / nx);
            let (what, j) = if j < ny {
                ("flow through the south face", j)
            } else {
                ("flow through the north face", ny - 1)
            };
            return Err(Error::non_finite(
                what,
                Location::on(grid, grid.index(i, j)),
            ));
        }
        Ok(FaceFlows {
            grid,
            x: x_faces,
            y: y_faces,
        })
    }

    /// Face flows from a Darcy flux (m/s; or a velocity times the porosity) given per face in
    /// the layout of [`FaceFlows::new`], of a fluid with volumetric heat capacity
    /// `heat_capacity` (J/(m³·K)): each face carries `flux · face area · heat_capacity` W/K, the
    /// face area being its length times the mean thickness of the cells beside it (one cell on
    /// the grid edge).
    ///
    /// # Errors
    ///
    /// As for [`FaceFlows::new`] (lengths, and the face of a flux that is not finite);
    /// [`ErrorKind::InvalidSetting`](crate::ErrorKind::InvalidSetting) for a heat capacity that
    /// is not finite and `>= 0`.
    ///
    /// ```
    /// use quintet::model::{FaceFlows, Geometry};
    /// let geometry = Geometry::cell_centered(2, 1, 10.0, 4.0, 3.0)?;
    /// // 1e-6 m/s east through the middle face only.
    /// let flows = FaceFlows::from_darcy_flux(&geometry, vec![0.0, 1e-6, 0.0], vec![0.0; 4], 4.18e6)?;
    /// assert!((flows.x_face(1, 0) - 1e-6 * 4.0 * 3.0 * 4.18e6).abs() < 1e-12);
    /// let err = FaceFlows::from_darcy_flux(&geometry, vec![0.0; 2], vec![0.0; 4], 4.18e6).unwrap_err();
    /// assert_eq!(err.kind(), quintet::ErrorKind::LengthMismatch);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn from_darcy_flux(
        geometry: &Geometry,
        x_flux: Vec<f64>,
        y_flux: Vec<f64>,
        heat_capacity: f64,
    ) -> Result<FaceFlows, Error> {
        if !(heat_capacity.is_finite() && heat_capacity >= 0.0) {
            return Err(Error::setting(
                "heat_capacity",
                heat_capacity,
                "finite and >= 0 (J/(m³·K))",
            ));
        }
        let grid = geometry.grid();
        let FaceFlows {
            x: mut xf,
            y: mut yf,
            ..
        } = FaceFlows::new(grid, x_flux, y_flux)?;
        let (nx, ny) = (grid.nx(), grid.ny());
        let thickness = |i: usize, j: usize| geometry.thickness(grid.index(i, j));
        for j in 0..ny {
            for i in 0..=nx {
                let b = match i {
                    0 => thickness(0, j),
                    i if i == nx => thickness(nx - 1, j),
                    i => 0.5 * (thickness(i - 1, j) + thickness(i, j)),
                };
                xf[i + (nx + 1) * j] *= geometry.y().width(j) * b * heat_capacity;
            }
        }
        for j in 0..=ny {
            for i in 0..nx {
                let b = match j {
                    0 => thickness(i, 0),
                    j if j == ny => thickness(i, ny - 1),
                    j => 0.5 * (thickness(i, j - 1) + thickness(i, j)),
                };
                yf[i + nx * j] *= geometry.x().width(i) * b * heat_capacity;
            }
        }
        FaceFlows::new(grid, xf, yf)
    }

    /// Face flows from a uniform Darcy flux `flux_x`, `flux_y` (m/s) of a fluid with
    /// volumetric heat capacity `heat_capacity` (J/(m³·K)), as
    /// [`from_darcy_flux`](FaceFlows::from_darcy_flux) with the same flux on every face.
    /// Divergence-free when the thickness is uniform.
    ///
    /// # Errors
    ///
    /// [`ErrorKind::InvalidSetting`](crate::ErrorKind::InvalidSetting) for a flux or heat
    /// capacity that is not finite, or a negative heat capacity.
    ///
    /// ```
    /// use quintet::model::{FaceFlows, Geometry};
    /// let geometry = Geometry::cell_centered(4, 4, 1.0, 1.0, 1.0)?;
    /// let flows = FaceFlows::uniform(&geometry, 0.0, 2e-6, 4.18e6)?;
    /// assert_eq!(flows.x_face(2, 2), 0.0);
    /// assert!(FaceFlows::uniform(&geometry, f64::NAN, 0.0, 1.0).is_err());
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn uniform(
        geometry: &Geometry,
        flux_x: f64,
        flux_y: f64,
        heat_capacity: f64,
    ) -> Result<FaceFlows, Error> {
        for (name, v) in [("flux_x", flux_x), ("flux_y", flux_y)] {
            if !v.is_finite() {
                return Err(Error::setting(name, v, "a finite Darcy flux (m/s)"));
            }
        }
        let grid = geometry.grid();
        let (nx, ny) = (grid.nx(), grid.ny());
        FaceFlows::from_darcy_flux(
            geometry,
            vec![flux_x; (nx + 1) * ny],
            vec![flux_y; nx * (ny + 1)],
            heat_capacity,
        )
    }

    /// The grid the flows belong to.
    ///
    /// ```
    /// # use quintet::{model::FaceFlows, Grid};
    /// let flows = FaceFlows::new(Grid::new(2, 1)?, vec![0.0; 3], vec![0.0; 4])?;
    /// assert_eq!(flows.grid().cells(), 2);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn grid(&self) -> Grid {
        self.grid
    }

    /// Flow through x-face `(i, j)`, `0 ≤ i ≤ nx` (the west face of cell `(i, j)`), W/K,
    /// positive towards the east; 0 off the grid.
    ///
    /// ```
    /// # use quintet::{model::FaceFlows, Grid};
    /// let flows = FaceFlows::new(Grid::new(2, 1)?, vec![1.0, 2.0, 3.0], vec![0.0; 4])?;
    /// assert_eq!(flows.x_face(2, 0), 3.0);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn x_face(&self, i: usize, j: usize) -> f64 {
        let nx = self.grid.nx();
        if i > nx || j >= self.grid.ny() {
            return 0.0;
        }
        self.x[i + (nx + 1) * j]
    }

    /// Flow through y-face `(i, j)`, `0 ≤ j ≤ ny` (the south face of cell `(i, j)`), W/K,
    /// positive towards the north; 0 off the grid.
    ///
    /// ```
    /// # use quintet::{model::FaceFlows, Grid};
    /// let flows = FaceFlows::new(Grid::new(1, 2)?, vec![0.0; 4], vec![1.0, 2.0, 3.0])?;
    /// assert_eq!(flows.y_face(0, 1), 2.0);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn y_face(&self, i: usize, j: usize) -> f64 {
        let nx = self.grid.nx();
        if i >= nx || j > self.grid.ny() {
            return 0.0;
        }
        self.y[i + nx * j]
    }

    /// Flow out of cell `k` through its face on `side` (W/K; negative for inflow).
    pub(crate) fn out_through(&self, k: usize, side: Side) -> f64 {
        let (i, j) = self.grid.coords(k);
        match side {
            Side::East => self.x_face(i + 1, j),
            Side::West => -self.x_face(i, j),
            Side::North => self.y_face(i, j + 1),
            Side::South => -self.y_face(i, j),
        }
    }

    /// Check that the flows belong to `grid`.
    pub(crate) fn check_grid(&self, grid: Grid) -> Result<(), Error> {
        check_grid("the face flows", grid, self.grid)
    }
}

/// A model's flow field and scheme.
#[derive(Clone, Debug, PartialEq)]
pub(crate) struct Advection {
    pub(crate) flows: FaceFlows,
    pub(crate) scheme: AdvectionScheme,
}
