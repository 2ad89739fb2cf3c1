//! The medium: how well each cell conducts ([`Conductivity`]) and how much it stores
//! ([`Storage`]).

use super::field::Field;
use crate::{Error, Grid};

/// How conductivities relate to the layer thickness.
///
/// ```
/// use quintet::model::{Conductivity, ConductivityBasis};
/// assert_eq!(Conductivity::isotropic(1e-4).basis(), ConductivityBasis::PerThickness);
/// assert_eq!(Conductivity::transmissivity(2e-3).basis(), ConductivityBasis::DepthIntegrated);
/// ```
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
pub enum ConductivityBasis {
    /// A material conductivity: thermal conductivity (W/(m·K)) or hydraulic conductivity
    /// (m/s), multiplied by the cell thickness to give what conducts across a face.
    PerThickness,
    /// Already integrated over the thickness: W/K for heat, transmissivity (m²/s) for a
    /// confined aquifer. The thickness is then not used for conduction (it still sets face
    /// areas for edge fluxes and volumes for storage and volumetric sources).
    DepthIntegrated,
}

/// Conductivity in every cell, isotropic or with separate east–west (`x`) and south–north
/// (`y`) values. Zero is allowed (a direction or a cell that does not conduct); negative or
/// non-finite values at active cells are rejected when the model is assembled.
///
/// Between two cells the conductance is that of the two half-cells in series, which for equal
/// spacing is the harmonic mean of the two conductivities (Patankar 1980, *Numerical Heat
/// Transfer and Fluid Flow*, §4.2.3): it gives the exact flux across a material interface on a
/// face, and no flow through a face next to a non-conducting cell.
///
/// # Example
///
/// ```
/// use quintet::{model::{Conductivity, Field}, Grid};
///
/// let sand_and_clay = Conductivity::isotropic(Field::from_fn(Grid::new(4, 4)?, |i, _| {
///     if i < 2 { 1e-4 } else { 1e-8 } // m/s
/// }));
/// let layered = Conductivity::anisotropic(1e-4, 1e-5);
/// assert_eq!(layered.y().at(0), 1e-5);
/// # let _ = sand_and_clay;
/// # Ok::<(), quintet::Error>(())
/// ```
#[derive(Clone, Debug, PartialEq)]
pub struct Conductivity {
    x: Field,
    y: Field,
    basis: ConductivityBasis,
}

impl Conductivity {
    /// The same material conductivity in both directions (W/(m·K) or m/s).
    ///
    /// ```
    /// let k = quintet::model::Conductivity::isotropic(45.0); // steel, W/(m·K)
    /// assert_eq!(k.x().at(0), k.y().at(0));
    /// ```
    pub fn isotropic(k: impl Into<Field>) -> Conductivity {
        let k = k.into();
        Conductivity {
            x: k.clone(),
            y: k,
            basis: ConductivityBasis::PerThickness,
        }
    }

    /// Material conductivities `kx` (east–west) and `ky` (south–north).
    ///
    /// ```
    /// let k = quintet::model::Conductivity::anisotropic(1e-4, 1e-6);
    /// assert_eq!(k.x().at(0), 1e-4);
    /// ```
    pub fn anisotropic(kx: impl Into<Field>, ky: impl Into<Field>) -> Conductivity {
        Conductivity {
            x: kx.into(),
            y: ky.into(),
            basis: ConductivityBasis::PerThickness,
        }
    }

    /// The same depth-integrated conductivity (transmissivity, m²/s; or W/K) in both
    /// directions.
    ///
    /// ```
    /// let t = quintet::model::Conductivity::transmissivity(5e-3);
    /// assert_eq!(t.x().at(0), 5e-3);
    /// ```
    pub fn transmissivity(t: impl Into<Field>) -> Conductivity {
        Conductivity {
            basis: ConductivityBasis::DepthIntegrated,
            ..Conductivity::isotropic(t)
        }
    }

    /// Depth-integrated conductivities `tx` and `ty` (m²/s, or W/K).
    ///
    /// ```
    /// let t = quintet::model::Conductivity::transmissivity_anisotropic(5e-3, 1e-3);
    /// assert_eq!(t.y().at(0), 1e-3);
    /// ```
    pub fn transmissivity_anisotropic(tx: impl Into<Field>, ty: impl Into<Field>) -> Conductivity {
        Conductivity {
            basis: ConductivityBasis::DepthIntegrated,
            ..Conductivity::anisotropic(tx, ty)
        }
    }

    /// East–west values.
    ///
    /// ```
    /// assert_eq!(quintet::model::Conductivity::anisotropic(2.0, 1.0).x().at(0), 2.0);
    /// ```
    pub fn x(&self) -> &Field {
        &self.x
    }

    /// South–north values.
    ///
    /// ```
    /// assert_eq!(quintet::model::Conductivity::anisotropic(2.0, 1.0).y().at(0), 1.0);
    /// ```
    pub fn y(&self) -> &Field {
        &self.y
    }

    /// Whether the values are per thickness or depth-integrated.
    ///
    /// ```
    /// use quintet::model::{Conductivity, ConductivityBasis};
    /// assert_eq!(Conductivity::isotropic(1.0).basis(), ConductivityBasis::PerThickness);
    /// ```
    pub fn basis(&self) -> ConductivityBasis {
        self.basis
    }

    /// Whether the two directions share one field (made by [`Conductivity::isotropic`] or
    /// [`Conductivity::transmissivity`]).
    pub(crate) fn is_isotropic(&self) -> bool {
        self.x == self.y
    }

    pub(crate) fn check_len(&self, grid: Grid) -> Result<(), Error> {
        if self.is_isotropic() {
            return self.x.check_len("conductivity", grid);
        }
        self.x.check_len("x conductivity", grid)?;
        self.y.check_len("y conductivity", grid)
    }
}

/// How much a cell stores per unit change of its value, for transient models.
///
/// The storage capacity of a cell, `S_k`, multiplies `dφ/dt` in its balance:
/// `S_k·dφ_k/dt = net inflow` (W or m³/s).
///
/// ```
/// use quintet::model::Storage;
/// // Granite: ρ·c ≈ 2.6e3 kg/m³ × 790 J/(kg·K)
/// let rock = Storage::per_volume(2.6e3 * 790.0);
/// // A confined aquifer with storativity 1e-4
/// let aquifer = Storage::per_area(1e-4);
/// # let _ = (rock, aquifer);
/// ```
#[derive(Clone, Debug, PartialEq)]
pub struct Storage {
    values: Field,
    per_volume: bool,
}

impl Storage {
    /// Capacity per unit volume, multiplied by the cell volume: volumetric heat capacity ρ·c
    /// (J/(m³·K)), or specific storage `S_s` (1/m).
    ///
    /// ```
    /// let s = quintet::model::Storage::per_volume(1e-5); // specific storage, 1/m
    /// # let _ = s;
    /// ```
    pub fn per_volume(values: impl Into<Field>) -> Storage {
        Storage {
            values: values.into(),
            per_volume: true,
        }
    }

    /// Capacity per unit plan area, multiplied by the plan area: storativity `S` (–) of a
    /// confined aquifer, specific yield as a linearised storage of a water table, or an areal
    /// heat capacity (J/(m²·K)).
    ///
    /// ```
    /// let s = quintet::model::Storage::per_area(2e-4); // storativity
    /// # let _ = s;
    /// ```
    pub fn per_area(values: impl Into<Field>) -> Storage {
        Storage {
            values: values.into(),
            per_volume: false,
        }
    }

    /// The coefficient per cell, as given.
    ///
    /// ```
    /// assert_eq!(quintet::model::Storage::per_area(2e-4).values().at(0), 2e-4);
    /// ```
    pub fn values(&self) -> &Field {
        &self.values
    }

    /// Whether the coefficient is per unit volume (else per unit plan area).
    ///
    /// ```
    /// assert!(quintet::model::Storage::per_volume(1.0).is_per_volume());
    /// ```
    pub fn is_per_volume(&self) -> bool {
        self.per_volume
    }
}
