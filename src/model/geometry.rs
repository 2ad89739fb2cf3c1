//! Grid geometry in metres: the control volume of every cell, where its node sits, and how
//! thick the layer is.

use super::field::Field;
use crate::{Error, Grid, Side};

/// Where an axis puts its nodes (the points whose value is solved for).
///
/// ```
/// use quintet::model::{Axis, AxisLayout};
/// assert_eq!(Axis::uniform_cells(4, 1.0)?.layout(), AxisLayout::CellCentered);
/// assert_eq!(Axis::uniform_nodes(5, 1.0)?.layout(), AxisLayout::NodeCentered);
/// # Ok::<(), quintet::Error>(())
/// ```
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
pub enum AxisLayout {
    /// Block-centred: the axis is cut into cells and each node sits at the middle of its
    /// cell. Edge conditions act on the outer face of the edge cells, half a cell away from
    /// their nodes. The usual layout for groundwater models.
    CellCentered,
    /// Node-centred: nodes are given and each control volume reaches half-way to the next
    /// node, so the first and last nodes lie on the edges with half-width control volumes. Edge
    /// conditions act at the edge nodes themselves. The layout of the energy-balance
    /// finite-difference method for heat conduction.
    NodeCentered,
}

/// One direction of the grid: control-volume widths, node positions and the distances from
/// each node to the two faces of its control volume, all in metres. Positions start at 0 on the
/// low (west or south) edge.
///
/// # Example
///
/// ```
/// use quintet::model::Axis;
///
/// let cells = Axis::cells(vec![1.0, 2.0, 1.0])?;
/// assert_eq!(cells.position(1), 2.0);
/// assert_eq!(cells.length(), 4.0);
///
/// let nodes = Axis::nodes(vec![1.0, 1.0])?; // three nodes, at 0, 1 and 2 m
/// assert_eq!(nodes.len(), 3);
/// assert_eq!(nodes.width(0), 0.5); // half control volume on the edge
/// assert_eq!(nodes.to_low_face(0), 0.0); // the edge node sits on the edge
/// # Ok::<(), quintet::Error>(())
/// ```
#[derive(Clone, Debug, PartialEq)]
pub struct Axis {
    layout: AxisLayout,
    widths: Vec<f64>,
    positions: Vec<f64>,
    to_low: Vec<f64>,
    to_high: Vec<f64>,
}

impl Axis {
    /// A cell-centred axis from the cell widths (m), low edge first.
    ///
    /// # Errors
    ///
    /// [`Error::InvalidSpacing`] for a width that is not positive and finite,
    /// [`Error::InvalidSetting`] for an empty list.
    ///
    /// ```
    /// use quintet::model::Axis;
    /// assert!(Axis::cells(vec![10.0, 0.0]).is_err());
    /// assert_eq!(Axis::cells(vec![10.0, 5.0])?.to_high_face(1), 2.5);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn cells(widths: Vec<f64>) -> Result<Axis, Error> {
        check_spacings("cell width", &widths)?;
        let half: Vec<f64> = widths.iter().map(|w| 0.5 * w).collect();
        let mut positions = Vec::with_capacity(widths.len());
        let mut edge = 0.0;
        for w in &widths {
            positions.push(edge + 0.5 * w);
            edge += w;
        }
        Ok(Axis {
            layout: AxisLayout::CellCentered,
            widths,
            positions,
            to_low: half.clone(),
            to_high: half,
        })
    }

    /// A cell-centred axis of `n` cells of `width` metres.
    ///
    /// # Errors
    ///
    /// As for [`Axis::cells`].
    ///
    /// ```
    /// assert_eq!(quintet::model::Axis::uniform_cells(10, 25.0)?.length(), 250.0);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn uniform_cells(n: usize, width: f64) -> Result<Axis, Error> {
        Axis::cells(vec![width; n])
    }

    /// A node-centred axis from the distances between consecutive nodes (m); there is one
    /// node more than there are spacings.
    ///
    /// # Errors
    ///
    /// [`Error::InvalidSpacing`] for a spacing that is not positive and finite,
    /// [`Error::InvalidSetting`] for an empty list (a single node has no control volume).
    ///
    /// ```
    /// let axis = quintet::model::Axis::nodes(vec![0.1, 0.2])?;
    /// assert_eq!(axis.position(2), 0.1 + 0.2);
    /// assert_eq!(axis.width(1), 0.15);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn nodes(spacings: Vec<f64>) -> Result<Axis, Error> {
        check_spacings("node spacing", &spacings)?;
        let n = spacings.len() + 1;
        let to_low: Vec<f64> = (0..n)
            .map(|i| if i == 0 { 0.0 } else { 0.5 * spacings[i - 1] })
            .collect();
        let to_high: Vec<f64> = (0..n)
            .map(|i| spacings.get(i).map_or(0.0, |s| 0.5 * s))
            .collect();
        let widths = to_low.iter().zip(&to_high).map(|(a, b)| a + b).collect();
        let mut positions = Vec::with_capacity(n);
        let mut x = 0.0;
        positions.push(x);
        for s in &spacings {
            x += s;
            positions.push(x);
        }
        Ok(Axis {
            layout: AxisLayout::NodeCentered,
            widths,
            positions,
            to_low,
            to_high,
        })
    }

    /// A node-centred axis of `n` nodes (`n ≥ 2`) `spacing` metres apart.
    ///
    /// # Errors
    ///
    /// As for [`Axis::nodes`].
    ///
    /// ```
    /// let axis = quintet::model::Axis::uniform_nodes(11, 0.1)?;
    /// assert!((axis.length() - 1.0).abs() < 1e-12);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn uniform_nodes(n: usize, spacing: f64) -> Result<Axis, Error> {
        Axis::nodes(vec![spacing; n.saturating_sub(1)])
    }

    /// The layout.
    ///
    /// ```
    /// # use quintet::model::{Axis, AxisLayout};
    /// assert_eq!(Axis::uniform_nodes(3, 1.0)?.layout(), AxisLayout::NodeCentered);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn layout(&self) -> AxisLayout {
        self.layout
    }

    /// Number of nodes (cells) along the axis.
    ///
    /// ```
    /// assert_eq!(quintet::model::Axis::uniform_cells(7, 1.0)?.len(), 7);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    #[allow(clippy::len_without_is_empty)] // an axis is never empty
    pub fn len(&self) -> usize {
        self.widths.len()
    }

    /// Control-volume width of node `i` (m).
    ///
    /// ```
    /// assert_eq!(quintet::model::Axis::cells(vec![3.0, 4.0])?.width(1), 4.0);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn width(&self, i: usize) -> f64 {
        self.widths[i]
    }

    /// Position of node `i` (m from the low edge).
    ///
    /// ```
    /// assert_eq!(quintet::model::Axis::cells(vec![3.0, 4.0])?.position(1), 5.0);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn position(&self, i: usize) -> f64 {
        self.positions[i]
    }

    /// All node positions (m), low edge first.
    ///
    /// ```
    /// assert_eq!(quintet::model::Axis::uniform_nodes(3, 0.5)?.positions(), &[0.0, 0.5, 1.0]);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn positions(&self) -> &[f64] {
        &self.positions
    }

    /// Distance from node `i` to the low face of its control volume (m); 0 for the first node
    /// of a node-centred axis.
    ///
    /// ```
    /// assert_eq!(quintet::model::Axis::uniform_cells(2, 4.0)?.to_low_face(0), 2.0);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn to_low_face(&self, i: usize) -> f64 {
        self.to_low[i]
    }

    /// Distance from node `i` to the high face of its control volume (m); 0 for the last node
    /// of a node-centred axis.
    ///
    /// ```
    /// assert_eq!(quintet::model::Axis::uniform_nodes(2, 4.0)?.to_high_face(1), 0.0);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn to_high_face(&self, i: usize) -> f64 {
        self.to_high[i]
    }

    /// Length of the axis from the low edge to the high edge (m).
    ///
    /// ```
    /// assert_eq!(quintet::model::Axis::cells(vec![1.0, 2.0])?.length(), 3.0);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn length(&self) -> f64 {
        let last = self.len() - 1;
        self.positions[last] + self.to_high[last]
    }

    /// The node whose control volume contains the coordinate `s` (m), or `None` outside the
    /// axis. A coordinate on a shared face belongs to the higher node.
    ///
    /// ```
    /// let axis = quintet::model::Axis::uniform_cells(4, 10.0)?;
    /// assert_eq!(axis.node_at(25.0), Some(2));
    /// assert_eq!(axis.node_at(-1.0), None);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn node_at(&self, s: f64) -> Option<usize> {
        if !(s >= 0.0 && s <= self.length()) {
            return None;
        }
        let i = self
            .positions
            .iter()
            .zip(&self.to_low)
            .take_while(|(p, d)| *p - *d <= s)
            .count();
        Some(i.saturating_sub(1))
    }
}

fn check_spacings(what: &'static str, spacings: &[f64]) -> Result<(), Error> {
    if spacings.is_empty() {
        return Err(Error::InvalidSetting {
            name: what,
            value: 0.0,
            allowed: "at least one spacing",
        });
    }
    match spacings.iter().position(|s| !(s.is_finite() && *s > 0.0)) {
        Some(index) => Err(Error::InvalidSpacing {
            what,
            index,
            value: spacings[index],
        }),
        None => Ok(()),
    }
}

/// The geometry of a model: an x axis (east, index `i`), a y axis (north, index `j`) and the
/// thickness of the layer (m) in every cell, perpendicular to the grid. Flows across a face
/// pass through `face length × thickness`; volumetric quantities use `plan area × thickness`.
/// For a plane problem "per metre of depth", give a thickness of 1 m.
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
    /// [`Error::LengthMismatch`] if a per-cell thickness does not have one value per cell.
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
    /// let g = quintet::model::Geometry::node_centered(11, 6, 0.1, 0.1, 1.0)?;
    /// assert_eq!(g.position(g.grid().index(10, 5)), (1.0, 0.5));
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
