//! Bad input gets typed errors naming the cell; singular problems are detected and either
//! refused or solved as the compatible problem; anisotropy follows Darcy's law.

use quintet::model::{
    Axis, Conductivity, Field, Geometry, Model, SingularPolicy, Stepper, Storage, TimeScheme,
};
use quintet::prelude::*;
use quintet::Location;

fn unit_model(nx: usize, ny: usize) -> Model {
    Model::new(
        Geometry::cell_centered(nx, ny, 1.0, 1.0, 1.0).unwrap(),
        Conductivity::isotropic(1.0),
    )
    .unwrap()
}

#[test]
fn negative_and_non_finite_conductivity_name_the_cell() {
    let grid = Grid::new(6, 5).unwrap();
    for (bad, what) in [(-1e-5, "x conductivity"), (f64::NAN, "x conductivity")] {
        let k = Field::from_fn(grid, |i, j| if (i, j) == (3, 2) { bad } else { 1e-4 });
        let geometry = Geometry::cell_centered(6, 5, 10.0, 10.0, 5.0).unwrap();
        let mut model = Model::new(geometry, Conductivity::anisotropic(k, 1e-4)).unwrap();
        model.prescribe_edge("edge", Side::West, 0.0).unwrap();
        let err = model.assemble().unwrap_err();
        assert_eq!(err.kind(), ErrorKind::InvalidProperty);
        assert_eq!(err.subject(), Some(what));
        assert_eq!(err.location(), Some(Location::on(grid, grid.index(3, 2))));
    }
    // The same bad value in an inactive cell is not an error.
    let k = Field::from_fn(grid, |i, j| if (i, j) == (3, 2) { -1.0 } else { 1e-4 });
    let geometry = Geometry::cell_centered(6, 5, 10.0, 10.0, 5.0).unwrap();
    let mut model = Model::new(geometry, Conductivity::isotropic(k)).unwrap();
    model.prescribe_edge("edge", Side::West, 0.0).unwrap();
    model.deactivate([grid.index(3, 2)]).unwrap();
    assert!(model.assemble().is_ok());
}

#[test]
fn zero_spacing_and_thickness_are_rejected() {
    assert!((Axis::cells(vec![1.0, 0.0, 1.0]))
        .is_err_and(|e| e.kind() == ErrorKind::InvalidSpacing && e.to_string().contains(" 1 is ")));
    assert!((Axis::nodes(vec![0.5, f64::INFINITY]))
        .is_err_and(|e| e.kind() == ErrorKind::InvalidSpacing && e.to_string().contains(" 1 is ")));
    assert!((Axis::uniform_nodes(1, 1.0)).is_err_and(|e| e.kind() == ErrorKind::InvalidSetting));
    assert!((Geometry::cell_centered(4, 4, -2.0, 1.0, 1.0))
        .is_err_and(|e| e.kind() == ErrorKind::InvalidSpacing && e.to_string().contains(" 0 is ")));
    let grid = Grid::new(4, 4).unwrap();
    let thickness = Field::from_fn(grid, |i, j| if (i, j) == (1, 3) { 0.0 } else { 8.0 });
    let geometry = Geometry::cell_centered(4, 4, 1.0, 1.0, thickness).unwrap();
    let mut model = Model::new(geometry, Conductivity::isotropic(1.0)).unwrap();
    model.prescribe_edge("edge", Side::West, 0.0).unwrap();
    assert!(
        (model.assemble()).is_err_and(|e| e.kind() == ErrorKind::InvalidProperty
            && e.subject() == Some("thickness")
            && e.location().and_then(|at| at.coords).map(|c| c.0) == Some(1)
            && e.location().and_then(|at| at.coords).map(|c| c.1) == Some(3))
    );
}

#[test]
fn conditions_on_inactive_or_prescribed_cells_name_the_cell() {
    let mut model = unit_model(5, 5);
    model.prescribe_edge("edge", Side::West, 0.0).unwrap();
    model.deactivate([12]).unwrap();
    model.point_source("well 7", 12, -1.0).unwrap();
    let err = model.assemble().unwrap_err();
    assert_eq!(err.kind(), ErrorKind::InactiveCell);
    assert_eq!(err.location().map(|at| at.coords), Some(Some((2, 2))));
    assert!(err.subject().is_some_and(|what| what.contains("well 7")));

    let mut model = unit_model(5, 5);
    model.deactivate([7]).unwrap();
    model.prescribe_cells("spring", [7], 3.0).unwrap();
    assert!((model.assemble()).is_err_and(
        |e| e.kind() == ErrorKind::InactiveCell && e.location().map(|at| at.cell) == Some(7)
    ));

    let mut model = unit_model(5, 5);
    model.prescribe_cells("spring", [7], 3.0).unwrap();
    model.cell_exchange("stream", [6, 7], 0.5, 1.0).unwrap();
    assert!(
        (model.assemble()).is_err_and(|e| e.kind() == ErrorKind::PrescribedCellConflict
            && e.location().map(|at| at.cell) == Some(7)
            && e.location().and_then(|at| at.coords).map(|c| c.0) == Some(2)
            && e.location().and_then(|at| at.coords).map(|c| c.1) == Some(1))
    );
}

#[test]
fn bad_values_are_caught_when_added() {
    let mut model = unit_model(4, 4);
    assert!((model.point_source("well", 16, -1.0))
        .is_err_and(|e| e.kind() == ErrorKind::CellOutOfRange
            && e.location().map(|at| at.cell) == Some(16)
            && e.to_string().contains("grid of 16 cells")));
    assert!(
        (model.point_source("well", 5, f64::NAN)).is_err_and(|e| e.kind() == ErrorKind::NonFinite
            && e.location().map(|at| at.cell) == Some(5)
            && e.location().and_then(|at| at.coords).map(|c| c.0) == Some(1)
            && e.location().and_then(|at| at.coords).map(|c| c.1) == Some(1))
    );
    assert!(
        (model.edge_exchange("air", Side::North, vec![1.0, -1.0, 1.0, 1.0], 20.0)).is_err_and(
            |e| e.kind() == ErrorKind::InvalidProperty
                && e.location().map(|at| at.cell) == Some(13)
                && e.location().and_then(|at| at.coords).map(|c| c.0) == Some(1)
                && e.location().and_then(|at| at.coords).map(|c| c.1) == Some(3)
        )
    );
    assert!((model.prescribe_edge("wall", Side::East, vec![1.0, 2.0]))
        .is_err_and(|e| e.kind() == ErrorKind::LengthMismatch
            && e.to_string().contains("2 entries given, 4 needed")));
    assert!((Model::new(
        Geometry::cell_centered(4, 4, 1.0, 1.0, 1.0).unwrap(),
        Conductivity::isotropic(vec![1.0; 15])
    ))
    .is_err_and(|e| e.kind() == ErrorKind::LengthMismatch
        && e.to_string().contains("15 entries given, 16 needed")));
    let mut system = {
        let mut m = unit_model(4, 4);
        m.prescribe_edge("wall", Side::West, 0.0).unwrap();
        m.assemble().unwrap()
    };
    let foreign = model.areal_source("rain", 1.0).unwrap();
    assert!((system.force(|f| f.set(foreign, 1.0)))
        .is_err_and(|e| e.kind() == ErrorKind::UnknownCondition));
}

#[test]
fn transient_setup_errors() {
    let mut model = unit_model(3, 3);
    let no_storage = Stepper::with_jacobi(&model, TimeScheme::BackwardEuler, 1.0, 0.0, &[0.0; 9]);
    assert!((no_storage)
        .is_err_and(|e| e.kind() == ErrorKind::InvalidSetting
            && e.to_string()
                == "the model's storage is not set: a transient run needs it; give it with Model::set_storage"));
    model.set_storage(Storage::per_area(1.0)).unwrap();
    for dt in [0.0, -1.0, f64::NAN] {
        let run = Stepper::with_jacobi(&model, TimeScheme::CrankNicolson, dt, 0.0, &[0.0; 9]);
        assert!((run).is_err_and(
            |e| e.kind() == ErrorKind::InvalidSetting && e.subject() == Some("time step")
        ));
    }
    let mut initial = [0.0; 9];
    initial[4] = f64::INFINITY;
    let run = Stepper::with_jacobi(&model, TimeScheme::BackwardEuler, 1.0, 0.0, &initial);
    assert!((run).is_err_and(
        |e| e.kind() == ErrorKind::NonFinite && e.location().map(|at| at.cell) == Some(4)
    ));
    // Storage anchors an insulated body: its transient problem is not singular.
    assert!(Stepper::with_jacobi(&model, TimeScheme::BackwardEuler, 1.0, 0.0, &[0.0; 9]).is_ok());
}

#[test]
fn insulated_body_without_fixed_value_is_detected() {
    let mut model = unit_model(6, 4);
    model.point_source("heater", 3, 1.0).unwrap();
    assert!(
        (model.assemble()).is_err_and(|e| e.kind() == ErrorKind::FloatingRegion
            && e.location().map(|at| at.cell) == Some(0)
            && e.to_string().contains("the 24 connected"))
    );
    // An inactive column cuts off an island on the east; the west part has a fixed value.
    let mut model = unit_model(6, 4);
    model.deactivate((0..4).map(|j| 3 + 6 * j)).unwrap();
    model.prescribe_edge("west wall", Side::West, 0.0).unwrap();
    let err = model.assemble().unwrap_err();
    assert_eq!(err.kind(), ErrorKind::FloatingRegion);
    assert_eq!(err.location().map(|at| at.coords), Some(Some((4, 0))));
    assert!(err.to_string().contains("the 8 connected"), "{err}");
}

/// The compatible problem: a 1-D insulated bar with heat entering one end and leaving the
/// other at the same rate has, by Fourier's law, the linear profile of gradient `−q''/k`
/// (Incropera & DeWitt §3.1), determined up to a constant; the mean is set to 20.
#[test]
fn balanced_pure_flux_problem_is_solved_with_the_mean_fixed() {
    let (n, dx, k, flux) = (40, 0.025, 50.0, 2.0e3);
    let geometry = Geometry::cell_centered(n, 1, dx, 1.0, 1.0).unwrap();
    let mut model = Model::new(geometry.clone(), Conductivity::isotropic(k)).unwrap();
    model.edge_flux("heat in", Side::West, flux).unwrap();
    model.edge_flux("heat out", Side::East, -flux).unwrap();
    model.set_singular_policy(SingularPolicy::FixMean(20.0));
    let system = model.assemble().unwrap();
    assert_eq!(system.floating_regions(), 1);
    let mut t = system.initial_solution(0.0);
    let mut cg = Cg::default().with_options(SolveOptions::default().tolerance(1e-13));
    system
        .solve(&mut cg, &mut t, &mut Workspace::new())
        .unwrap();
    let mean = t.iter().sum::<f64>() / n as f64;
    let centre = 0.5 * n as f64 * dx;
    let err = (0..n)
        .map(|i| (t[i] - (20.0 - flux / k * (geometry.position(i).0 - centre))).abs())
        .fold(0.0, f64::max);
    println!("insulated bar, mean fixed: max error {err:.3e} K, mean {mean}");
    assert!((mean - 20.0).abs() < 1e-12);
    assert!(err < 1e-9, "{err}");
    assert!(system.budget(&t).unwrap().imbalance_percent().abs() < 1e-10);

    // Unbalanced: no steady state exists.
    let mut model = Model::new(geometry, Conductivity::isotropic(k)).unwrap();
    model.edge_flux("heat in", Side::West, flux).unwrap();
    model.set_singular_policy(SingularPolicy::FixMean(20.0));
    assert!((model.assemble())
        .is_err_and(|e| e.kind() == ErrorKind::UnbalancedSources
            && e.location().map(|at| at.cell) == Some(0)));
}

/// Darcy's law with anisotropy: a uniform gradient along x drives `Q = kx·b·L·Δh/len`, along y
/// `Q = ky·b·L·Δh/len`; the scheme is exact for linear heads (common practice).
#[test]
fn anisotropic_flow_follows_darcy_in_each_direction() {
    let (kx, ky, b) = (2e-4, 5e-6, 15.0);
    for (high, low, k_along) in [(Side::West, Side::East, kx), (Side::South, Side::North, ky)] {
        let geometry = Geometry::cell_centered(20, 10, 25.0, 40.0, b).unwrap();
        let (length, width) = match high {
            Side::West => (20.0 * 25.0, 10.0 * 40.0),
            _ => (10.0 * 40.0, 20.0 * 25.0),
        };
        let mut model = Model::new(geometry, Conductivity::anisotropic(kx, ky)).unwrap();
        let inflow = model.prescribe_edge("high", high, 12.0).unwrap();
        model.prescribe_edge("low", low, 10.0).unwrap();
        let system = model.assemble().unwrap();
        check_symmetry(system.operator(), 0.0).unwrap();
        let mut h = system.initial_solution(11.0);
        let mut pcg = Pcg::new(Jacobi::new(system.operator()).unwrap())
            .with_options(SolveOptions::default().tolerance(1e-13));
        system
            .solve(&mut pcg, &mut h, &mut Workspace::new())
            .unwrap();
        let q = system.budget(&h).unwrap().line(inflow).unwrap().net();
        let darcy = k_along * b * width * 2.0 / length;
        println!("Darcy along {high}: Q = {q:.12e} m³/s (exact {darcy:.12e})");
        assert!((q - darcy).abs() <= 1e-9 * darcy);
    }
}

/// Face conductances are the half-cells in series (Patankar 1980, §4.2): two cells of
/// conductivity 1 and 3 with equal widths joined by `2·1·3/(1+3)/d`, the harmonic mean.
#[test]
fn face_conductance_is_the_harmonic_mean() {
    let geometry = Geometry::cell_centered(2, 1, 0.5, 1.0, 1.0).unwrap();
    let mut model = Model::new(geometry, Conductivity::isotropic(vec![1.0, 3.0])).unwrap();
    model.prescribe_edge("wall", Side::West, 0.0).unwrap();
    let system = model.assemble().unwrap();
    let harmonic = 2.0 * 1.0 * 3.0 / (1.0 + 3.0);
    let east = system.operator().coeffs(0, 0).east;
    assert!((-east - harmonic / 0.5).abs() <= 4.0 * f64::EPSILON * harmonic / 0.5);
    // A non-conducting neighbour cuts the face.
    let geometry = Geometry::cell_centered(3, 1, 0.5, 1.0, 1.0).unwrap();
    let mut model = Model::new(geometry, Conductivity::isotropic(vec![1.0, 0.0, 1.0])).unwrap();
    model.prescribe_edge("wall", Side::West, 0.0).unwrap();
    model.prescribe_edge("wall", Side::East, 0.0).unwrap();
    assert!(
        (model.assemble()).is_err_and(|e| e.kind() == ErrorKind::FloatingRegion
            && e.location().map(|at| at.cell) == Some(1)
            && e.to_string().contains("deactivate it (Model::deactivate)"))
    );
}

/// The messages of the mistakes a new model makes say what is wrong and where, in the model's
/// own terms (the edge, the field, the condition), with numbers a person reads.
#[test]
fn model_messages_name_what_to_fix() {
    // A profile of the wrong length names the edge, not the grid.
    let mut model = unit_model(4, 6);
    let err = model
        .prescribe_edge("wall", Side::West, vec![1.0, 2.0, 3.0])
        .unwrap_err();
    assert_eq!(
        err.to_string(),
        "prescribed value along the west edge (one per edge cell): 3 entries given, 6 needed"
    );
    // An isotropic field is one field: "conductivity", not "x conductivity".
    let grid = Grid::new(4, 6).unwrap();
    let k = Field::from_fn(grid, |i, j| if (i, j) == (2, 3) { -1.0 } else { 1.0 });
    let mut model = Model::new(
        Geometry::cell_centered(4, 6, 1.0, 1.0, 1.0).unwrap(),
        Conductivity::isotropic(k),
    )
    .unwrap();
    model.prescribe_edge("wall", Side::West, 0.0).unwrap();
    assert_eq!(
        model.assemble().unwrap_err().to_string(),
        "conductivity at cell 14 (i = 2, j = 3) is -1; it must be finite and >= 0"
    );
    // Sources that cannot balance, in four significant digits with units.
    let mut model = unit_model(5, 1);
    model.edge_flux("heat in", Side::West, 2.5).unwrap();
    model.set_singular_policy(SingularPolicy::FixMean(20.0));
    assert_eq!(
        model.assemble().unwrap_err().to_string(),
        "the region around cell 0 (i = 0, j = 0) has no prescribed value or exchange, and its sources do not balance: net inflow 2.500 against a total source magnitude of 2.500 (W for heat, m³/s for groundwater); no steady state exists"
    );
}
