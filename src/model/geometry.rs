//! Grid geometry in metres: two axes and the thickness of the layer.

use super::axis::{Axis, AxisLayout};
use super::field::Field;
use crate::{Error, Grid, Side};

/// The geometry of a model: an x axis (east, index `i`), a y axis (north, index `j`) and the
/// thickness of the layer (m) in every cell, perpendicular to the grid. Flows across a face
/// pass through `face length × thickness`; volumetric quantities use `plan area × thickness`.
/// For a plane problem "per metre of depth", give a thickness of 1 m. Queries for a cell
/// index off the grid return NaN.
///
/// # Example
///
/// ```
/// use quintet::{model::Geometry, Side};
///
/// // 40 x 30 cells of 25 m x 25 m, an aquifer 12 m thick.
/// let geometry = Geometry::cell_centered(40, 30, 25.0, 25.0, 12.0)?;
/// let k = geometry.grid().index(3, 4);
/// assert_eq!(geometry.plan_area(k), 625.0);
/// assert_eq!(geometry.volume(k), 7500.0);
/// assert_eq!(geometry.face_area(k, Side::East), 300.0);
/// assert_eq!(geometry.position(k), (87.5, 112.5));
/// # Ok::<(), quintet::Error>(())
/// ```
#[derive(Clone, Debug, PartialEq)]
pub struct Geometry {
    grid: Grid,
    x: Axis,
    y: Axis,
    thickness: Field,
}

impl Geometry {
    /// A geometry from two axes and the thickness (m, uniform or per cell).
    ///
    /// Thickness values are checked (positive and finite) for active cells when a model is
    /// assembled, so inactive cells may carry zero.
    ///
    /// # Errors
    ///
    /// [`ErrorKind::LengthMismatch`](crate::ErrorKind::LengthMismatch) if a per-cell thickness does not have one value per cell.
    ///
    /// ```
    /// use quintet::model::{Axis, Geometry};
    /// let g = Geometry::new(Axis::uniform_nodes(21, 0.01)?, Axis::uniform_cells(1, 1.0)?, 1.0)?;
    /// assert_eq!((g.grid().nx(), g.grid().ny()), (21, 1));
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn new(x: Axis, y: Axis, thickness: impl Into<Field>) -> Result<Geometry, Error> {
        let grid = Grid::new(x.len(), y.len())?;
        let thickness = thickness.into();
        thickness.check_len("thickness", grid)?;
        Ok(Geometry {
            grid,
            x,
            y,
            thickness,
        })
    }

    /// `nx × ny` cells of `dx × dy` metres, nodes at the cell centres, `thickness` metres
    /// thick.
    ///
    /// # Errors
    ///
    /// As for [`Axis::cells`] and [`Geometry::new`].
    ///
    /// ```
    /// let g = quintet::model::Geometry::cell_centered(10, 5, 2.0, 4.0, 1.0)?;
    /// assert_eq!(g.x().length(), 20.0);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn cell_centered(
        nx: usize,
        ny: usize,
        dx: f64,
        dy: f64,
        thickness: impl Into<Field>,
    ) -> Result<Geometry, Error> {
        Geometry::new(
            Axis::uniform_cells(nx, dx)?,
            Axis::uniform_cells(ny, dy)?,
            thickness,
        )
    }

    /// `nx × ny` nodes `dx` and `dy` metres apart, the outer nodes on the edges, `thickness`
    /// metres thick.
    ///
    /// # Errors
    ///
    /// As for [`Axis::nodes`] and [`Geometry::new`].
    ///
    /// ```
    /// let g = quintet::model::Geometry::node_centered(5, 3, 0.25, 0.25, 1.0)?;
    /// assert_eq!(g.position(g.grid().index(4, 2)), (1.0, 0.5));
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn node_centered(
        nx: usize,
        ny: usize,
        dx: f64,
        dy: f64,
        thickness: impl Into<Field>,
    ) -> Result<Geometry, Error> {
        Geometry::new(
            Axis::uniform_nodes(nx, dx)?,
            Axis::uniform_nodes(ny, dy)?,
            thickness,
        )
    }

    /// The grid of cells.
    ///
    /// ```
    /// let g = quintet::model::Geometry::cell_centered(3, 2, 1.0, 1.0, 1.0)?;
    /// assert_eq!(g.grid().cells(), 6);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn grid(&self) -> Grid {
        self.grid
    }

    /// The east–west axis (index `i`).
    ///
    /// ```
    /// let g = quintet::model::Geometry::cell_centered(3, 2, 1.0, 1.0, 1.0)?;
    /// assert_eq!(g.x().len(), 3);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn x(&self) -> &Axis {
        &self.x
    }

    /// The south–north axis (index `j`).
    ///
    /// ```
    /// let g = quintet::model::Geometry::cell_centered(3, 2, 1.0, 1.0, 1.0)?;
    /// assert_eq!(g.y().len(), 2);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn y(&self) -> &Axis {
        &self.y
    }

    /// Thickness of cell `k` (m).
    ///
    /// ```
    /// let g = quintet::model::Geometry::cell_centered(2, 1, 1.0, 1.0, vec![3.0, 4.0])?;
    /// assert_eq!(g.thickness(1), 4.0);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn thickness(&self, k: usize) -> f64 {
        self.thickness.at(k)
    }

    /// Plan area of the control volume of cell `k` (m²).
    ///
    /// ```
    /// let g = quintet::model::Geometry::cell_centered(2, 2, 2.0, 3.0, 1.0)?;
    /// assert_eq!(g.plan_area(3), 6.0);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn plan_area(&self, k: usize) -> f64 {
        let (i, j) = self.grid.coords(k);
        self.x.width(i) * self.y.width(j)
    }

    /// Volume of the control volume of cell `k` (m³): plan area × thickness.
    ///
    /// ```
    /// let g = quintet::model::Geometry::cell_centered(2, 2, 2.0, 3.0, 0.5)?;
    /// assert_eq!(g.volume(0), 3.0);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn volume(&self, k: usize) -> f64 {
        self.plan_area(k) * self.thickness(k)
    }

    /// Area of the face of cell `k`'s control volume on `side` (m²): the face length times the
    /// cell's thickness.
    ///
    /// ```
    /// use quintet::{model::Geometry, Side};
    /// let g = Geometry::cell_centered(2, 2, 2.0, 3.0, 0.5)?;
    /// assert_eq!(g.face_area(0, Side::West), 1.5);
    /// assert_eq!(g.face_area(0, Side::North), 1.0);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn face_area(&self, k: usize, side: Side) -> f64 {
        let (i, j) = self.grid.coords(k);
        let length = match side {
            Side::West | Side::East => self.y.width(j),
            Side::South | Side::North => self.x.width(i),
        };
        length * self.thickness(k)
    }

    /// Distance from the node of cell `k` to its face on `side` (m).
    ///
    /// ```
    /// use quintet::{model::Geometry, Side};
    /// let g = Geometry::node_centered(3, 3, 1.0, 1.0, 1.0)?;
    /// assert_eq!(g.to_face(0, Side::West), 0.0);
    /// assert_eq!(g.to_face(0, Side::East), 0.5);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn to_face(&self, k: usize, side: Side) -> f64 {
        let (i, j) = self.grid.coords(k);
        match side {
            Side::West => self.x.to_low_face(i),
            Side::East => self.x.to_high_face(i),
            Side::South => self.y.to_low_face(j),
            Side::North => self.y.to_high_face(j),
        }
    }

    /// Position `(x, y)` of the node of cell `k` (m from the south-west corner).
    ///
    /// ```
    /// let g = quintet::model::Geometry::cell_centered(4, 4, 10.0, 10.0, 1.0)?;
    /// assert_eq!(g.position(5), (15.0, 15.0));
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn position(&self, k: usize) -> (f64, f64) {
        let (i, j) = self.grid.coords(k);
        (self.x.position(i), self.y.position(j))
    }

    /// The cell whose control volume contains the point `(x, y)` (m), if any: the place to
    /// put a well or a heater given by its coordinates.
    ///
    /// ```
    /// let g = quintet::model::Geometry::cell_centered(4, 4, 10.0, 10.0, 1.0)?;
    /// assert_eq!(g.cell_at(12.0, 31.0), Some(g.grid().index(1, 3)));
    /// assert_eq!(g.cell_at(50.0, 1.0), None);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn cell_at(&self, x: f64, y: f64) -> Option<usize> {
        Some(self.grid.index(self.x.node_at(x)?, self.y.node_at(y)?))
    }

    /// The cells along the edge on `side`, in order (west to east for south and north, south
    /// to north for west and east): the targets of an edge condition.
    ///
    /// ```
    /// use quintet::{model::Geometry, Side};
    /// let g = Geometry::cell_centered(3, 2, 1.0, 1.0, 1.0)?;
    /// assert_eq!(g.edge(Side::North), vec![3, 4, 5]);
    /// assert_eq!(g.edge(Side::East), vec![2, 5]);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn edge(&self, side: Side) -> Vec<usize> {
        let (nx, ny) = (self.grid.nx(), self.grid.ny());
        match side {
            Side::West => (0..ny).map(|j| self.grid.index(0, j)).collect(),
            Side::East => (0..ny).map(|j| self.grid.index(nx - 1, j)).collect(),
            Side::South => (0..nx).map(|i| self.grid.index(i, 0)).collect(),
            Side::North => (0..nx).map(|i| self.grid.index(i, ny - 1)).collect(),
        }
    }

    /// The layout of the axis that crosses the edge on `side` (x for west/east).
    pub(crate) fn layout_across(&self, side: Side) -> AxisLayout {
        match side {
            Side::West | Side::East => self.x.layout(),
            Side::South | Side::North => self.y.layout(),
        }
    }
}
