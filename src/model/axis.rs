//! One direction of the grid: cell widths or node spacings, node positions, and the distance
//! from each node to the faces of its control volume.

use crate::Error;

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
    /// [`ErrorKind::InvalidSpacing`](crate::ErrorKind::InvalidSpacing) for a width that is not positive and finite,
    /// [`ErrorKind::InvalidSetting`](crate::ErrorKind::InvalidSetting) for an empty list.
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
    /// [`ErrorKind::InvalidSpacing`](crate::ErrorKind::InvalidSpacing) for a spacing that is not positive and finite,
    /// [`ErrorKind::InvalidSetting`](crate::ErrorKind::InvalidSetting) for an empty list (a single node has no control volume).
    ///
    /// ```
    /// let axis = quintet::model::Axis::nodes(vec![0.25, 0.5])?;
    /// assert_eq!(axis.position(2), 0.75);
    /// assert_eq!(axis.width(1), 0.375);
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

    /// Control-volume width of node `i` (m); NaN past the end of the axis.
    ///
    /// ```
    /// let axis = quintet::model::Axis::cells(vec![3.0, 4.0])?;
    /// assert_eq!(axis.width(1), 4.0);
    /// assert!(axis.width(2).is_nan());
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn width(&self, i: usize) -> f64 {
        self.widths.get(i).copied().unwrap_or(f64::NAN)
    }

    /// Position of node `i` (m from the low edge); NaN past the end of the axis.
    ///
    /// ```
    /// assert_eq!(quintet::model::Axis::cells(vec![3.0, 4.0])?.position(1), 5.0);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn position(&self, i: usize) -> f64 {
        self.positions.get(i).copied().unwrap_or(f64::NAN)
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
    /// of a node-centred axis, NaN past the end of the axis.
    ///
    /// ```
    /// assert_eq!(quintet::model::Axis::uniform_cells(2, 4.0)?.to_low_face(0), 2.0);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn to_low_face(&self, i: usize) -> f64 {
        self.to_low.get(i).copied().unwrap_or(f64::NAN)
    }

    /// Distance from node `i` to the high face of its control volume (m); 0 for the last node
    /// of a node-centred axis, NaN past the end of the axis.
    ///
    /// ```
    /// assert_eq!(quintet::model::Axis::uniform_nodes(2, 4.0)?.to_high_face(1), 0.0);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn to_high_face(&self, i: usize) -> f64 {
        self.to_high.get(i).copied().unwrap_or(f64::NAN)
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
        return Err(Error::setting(
            what,
            0.0,
            "at least one spacing (a node-centred axis needs two nodes; for a single row or column use a cell-centred axis of one cell)",
        ));
    }
    match spacings.iter().position(|s| !(s.is_finite() && *s > 0.0)) {
        Some(index) => Err(Error::spacing(what, index, spacings[index])),
        None => Ok(()),
    }
}
