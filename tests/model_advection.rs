//! Heat carried by a given flow field in the model (`Model::set_advection`).
//!
//! * 1-D steady advection–diffusion between two fixed values, against the exact solution
//!   `φ(x) = (e^{Pe·x/L} − 1)/(e^{Pe} − 1)` (Patankar 1980, *Numerical Heat Transfer and Fluid
//!   Flow*, §5.2): the exponential scheme is exact at the nodes; upwind is first order, central
//!   second order below cell Péclet 2 and oscillating above it; power-law close to exponential.
//! * The assembled non-symmetric operator solved by a general-purpose dense LU (nalgebra)
//!   agrees with the model's iterative answer within the bound its stopping tolerance implies.
//! * A zero flow field changes no bit.
//!
//! Error bounds: for a solve stopped at `‖r‖/‖b‖ ≤ ρ`, `‖x − x*‖/‖x*‖ ≤ κ₂(A)·ρ` (Golub & Van
//! Loan, *Matrix Computations*, 4th ed. 2013, §2.6.2), `κ₂` from the singular values of the
//! dense free-cell matrix (these operators are not symmetric), plus `100·n·ε·κ₂` for rounding.
//! The budget checks are in `model_advection_budget.rs`.

mod common;

use common::{norm, Problem};
use nalgebra::DMatrix;
use quintet::model::{
    AdvectionScheme, Axis, Conductivity, FaceFlows, Geometry, Model, SteadySystem, Stepper,
    Storage, TimeScheme,
};
use quintet::prelude::*;

const EPS: f64 = f64::EPSILON;

/// The model's assembled system as a test `Problem` (bands, fixed cells, rhs, fixed values).
fn as_problem(system: &SteadySystem) -> Problem {
    let op = system.operator();
    let grid = op.grid();
    Problem {
        grid,
        bands: [
            op.center().to_vec(),
            op.west().to_vec(),
            op.east().to_vec(),
            op.south().to_vec(),
            op.north().to_vec(),
        ],
        fixed: op.fixed_cells().map_or(Vec::new(), |f| f.cells().to_vec()),
        rhs: system.rhs().to_vec(),
        x0: system.initial_solution(0.0),
    }
}

/// 2-norm condition number of the free-cell matrix from its singular values.
fn condition_number(p: &Problem) -> f64 {
    let (a, _, _): (DMatrix<f64>, _, _) = p.dense_free_system();
    let s = a.svd(false, false).singular_values;
    let max = s.iter().copied().fold(0.0, f64::max);
    let min = s.iter().copied().fold(f64::MAX, f64::min);
    max / min
}

/// A 1-D channel of `intervals` equal intervals over `length = 1` m on a node-centred axis
/// (one cell of 1 m across, 1 m thick), conductivity 1 W/(m·K), the end nodes held at 0 and 1,
/// and a uniform carried flow `pe` W/K from west to east, so that the Péclet number of the
/// whole channel is `Pe = F·L/(k·A) = pe` and that of a cell `pe/intervals`.
fn channel(intervals: usize, pe: f64, scheme: AdvectionScheme) -> (Model, Vec<f64>) {
    let h = 1.0 / intervals as f64;
    let geometry = Geometry::new(
        Axis::uniform_nodes(intervals + 1, h).unwrap(),
        Axis::uniform_cells(1, 1.0).unwrap(),
        1.0,
    )
    .unwrap();
    let grid = geometry.grid();
    let nodes: Vec<f64> = geometry.x().positions().to_vec();
    let mut model = Model::new(geometry, Conductivity::isotropic(1.0)).unwrap();
    model.prescribe_edge("inlet end", Side::West, 0.0).unwrap();
    model.prescribe_edge("outlet end", Side::East, 1.0).unwrap();
    let flows = FaceFlows::new(
        grid,
        vec![pe; grid.nx() + 1],
        vec![0.0; grid.nx() * (grid.ny() + 1)],
    )
    .unwrap();
    model.set_advection(flows, scheme).unwrap();
    (model, nodes)
}

/// Patankar 1980, §5.2: the exact steady solution between φ(0) = 0 and φ(L) = 1.
fn exact(pe: f64, x: f64) -> f64 {
    (pe * x).exp_m1() / pe.exp_m1()
}

/// The channel's nodal values by the dense LU of the assembled operator.
fn channel_lu(intervals: usize, pe: f64, scheme: AdvectionScheme) -> (Vec<f64>, Vec<f64>) {
    let (model, nodes) = channel(intervals, pe, scheme);
    let system = model.assemble().unwrap();
    (as_problem(&system).reference_solution(), nodes)
}

fn max_error(x: &[f64], nodes: &[f64], pe: f64) -> f64 {
    x.iter()
        .zip(nodes)
        .map(|(v, &s)| (v - exact(pe, s)).abs())
        .fold(0.0, f64::max)
}

/// Sign changes of successive differences: 0 for a monotone profile.
fn wiggles(x: &[f64]) -> usize {
    let d: Vec<f64> = x.windows(2).map(|w| w[1] - w[0]).collect();
    d.windows(2).filter(|w| w[0] * w[1] < 0.0).count()
}

/// The exponential scheme is exact for 1-D steady advection–diffusion with uniform
/// properties (Patankar 1980, §5.2 and §5.4): the model's iterative answer matches the exact
/// solution at the nodes to within the bound of its stopping tolerance, at cell Péclet numbers
/// from 0.1 to 20.
#[test]
fn exponential_scheme_is_exact_at_the_nodes() {
    for (intervals, pe) in [(40, 4.0), (40, 40.0), (20, 100.0), (50, -30.0)] {
        let (model, nodes) = channel(intervals, pe, AdvectionScheme::Exponential);
        let system = model.assemble().unwrap();
        assert!(!system.is_symmetric());
        // The model's own pick (SIP, whose factor is exact on one row of cells) and a driver
        // the caller brings (Gauss–Seidel, which iterates).
        let drivers: [Box<dyn IterativeSolver<f64>>; 2] = [
            system.default_solver().unwrap(),
            Box::new(Sor::gauss_seidel()),
        ];
        for mut solver in drivers {
            *solver.options_mut() = SolveOptions::default()
                .tolerance(1e-13)
                .max_iterations(100_000);
            let mut x = system.initial_solution(0.0);
            let report = system
                .solve(&mut solver, &mut x, &mut Workspace::new())
                .unwrap();
            let kappa = condition_number(&as_problem(&system));
            let exact_values: Vec<f64> = nodes.iter().map(|&s| exact(pe, s)).collect();
            let n = nodes.len() as f64;
            let bound = (kappa * report.relative_residual() + 100.0 * n * EPS * kappa)
                * norm(&exact_values);
            let err = max_error(&x, &nodes, pe);
            println!(
                "exponential, {intervals} intervals, Pe = {pe} (cell {}): max error {err:.2e}, bound {bound:.2e} (κ₂ {kappa:.2e}, {} iterations of {})",
                pe / intervals as f64,
                report.iterations,
                report.method
            );
            assert!(err <= bound, "error {err:e} > bound {bound:e}");
        }
    }
}

/// Upwind: first order (numerical diffusion F·h/2); central: second order while the cell
/// Péclet number stays below 2. Observed orders from the max-norm error under refinement
/// (common practice), Pe = 20, 40 to 640 intervals (cell Péclet 0.5 down to 0.03); solved by
/// dense LU so that only the discretisation error is measured.
#[test]
fn upwind_is_first_order_and_central_second_order() {
    let pe = 20.0;
    let sizes = [40, 80, 160, 320, 640];
    for (scheme, expected) in [
        (AdvectionScheme::Upwind, 1.0),
        (AdvectionScheme::Central, 2.0),
    ] {
        let errors: Vec<f64> = sizes
            .iter()
            .map(|&m| {
                let (x, nodes) = channel_lu(m, pe, scheme);
                max_error(&x, &nodes, pe)
            })
            .collect();
        let orders: Vec<f64> = errors.windows(2).map(|e| (e[0] / e[1]).log2()).collect();
        println!("{scheme:?}: max errors {errors:.3?}, observed orders {orders:.3?}");
        let last = orders[orders.len() - 1];
        assert!(
            (last - expected).abs() < 0.05,
            "{scheme:?}: observed order {last}"
        );
        assert!(orders.iter().all(|o| (o - expected).abs() < 0.25));
    }
}

/// Central differencing oscillates once the cell Péclet number exceeds 2 (Patankar 1980, §5.2:
/// the neighbour coefficient `D − F/2` turns negative), upwind, exponential and power-law never
/// do; the exact profile is monotone.
#[test]
fn central_oscillates_above_cell_peclet_two() {
    let pe = 20.0;
    for intervals in [4, 5, 8, 9, 10, 12, 20, 40] {
        let cell = pe / intervals as f64;
        let counts: Vec<(AdvectionScheme, usize)> = [
            AdvectionScheme::Central,
            AdvectionScheme::Upwind,
            AdvectionScheme::Exponential,
            AdvectionScheme::PowerLaw,
        ]
        .into_iter()
        .map(|s| (s, wiggles(&channel_lu(intervals, pe, s).0)))
        .collect();
        println!("cell Péclet {cell:.2}: sign changes of successive differences {counts:?}");
        for (scheme, count) in counts {
            if scheme == AdvectionScheme::Central && cell > 2.0 {
                assert!(count > 0, "central at cell Péclet {cell}: no oscillation");
            } else {
                assert_eq!(count, 0, "{scheme:?} at cell Péclet {cell}");
            }
        }
    }
}

/// Power-law against exponential: Patankar 1980, §5.2.7 (from memory) says the power law
/// follows the exponential closely and is cheaper. Measured here: the largest deviation of
/// `A(|P|)` over `0 ≤ |P| ≤ 20` and of the channel solution at cell Péclet 0.5 to 10.
#[test]
fn power_law_is_close_to_exponential() {
    let (mut worst, mut at) = (0.0f64, 0.0);
    for step in 0..=20_000 {
        let p = step as f64 * 1e-3;
        let d =
            (AdvectionScheme::PowerLaw.weight(p) - AdvectionScheme::Exponential.weight(p)).abs();
        if d > worst {
            (worst, at) = (d, p);
        }
    }
    println!("max |A_power(P) − A_exp(P)| = {worst:.4e} at |P| = {at:.3}");
    assert!(worst < 0.02);
    for intervals in [40, 20, 10, 4, 2] {
        let pe = 20.0;
        let (xp, nodes) = channel_lu(intervals, pe, AdvectionScheme::PowerLaw);
        let err = max_error(&xp, &nodes, pe);
        println!(
            "power law, cell Péclet {}: max nodal deviation from the exact solution {err:.3e}",
            pe / intervals as f64
        );
        assert!(err < 0.02);
    }
}

/// A 2-D flow field with swirl, from a stream function (so divergence-free to rounding): a
/// uniform south-west to north-east drift plus a vortex, `strength` W/K across the grid.
fn swirl_flows(grid: Grid, strength: f64) -> FaceFlows {
    let (nx, ny) = (grid.nx(), grid.ny());
    let psi = |i: usize, j: usize| {
        let (x, y) = (i as f64 / nx as f64, j as f64 / ny as f64);
        strength * (0.6 * y - 0.3 * x)
            + 0.4 * strength * (std::f64::consts::PI * x).sin() * (std::f64::consts::PI * y).sin()
    };
    let mut xf = Vec::new();
    for j in 0..ny {
        for i in 0..=nx {
            xf.push(psi(i, j + 1) - psi(i, j));
        }
    }
    let mut yf = Vec::new();
    for j in 0..=ny {
        for i in 0..nx {
            yf.push(-(psi(i + 1, j) - psi(i, j)));
        }
    }
    FaceFlows::new(grid, xf, yf).unwrap()
}

/// A 24 x 16 aquifer slice with inflow values on every edge, a warm block of prescribed cells
/// (a foundation), an exchange edge, a heat source and storage; `flows` if given.
fn swirl_model(flows: Option<FaceFlows>, scheme: AdvectionScheme) -> Model {
    swirl_model_with(flows, scheme, Conductivity::isotropic(2.4))
}

fn swirl_model_with(
    flows: Option<FaceFlows>,
    scheme: AdvectionScheme,
    conductivity: Conductivity,
) -> Model {
    let geometry = Geometry::cell_centered(24, 16, 2.0, 2.0, 5.0).unwrap();
    let grid = geometry.grid();
    let nx = grid.nx();
    let mut model = Model::new(geometry, conductivity).unwrap();
    model.set_storage(Storage::per_volume(2.5e6)).unwrap();
    if let Some(flows) = flows {
        model.set_advection(flows, scheme).unwrap();
    }
    model.inflow_value("west inflow", Side::West, 10.0).unwrap();
    let south: Vec<f64> = (0..nx).map(|i| 10.0 + 0.1 * i as f64).collect();
    model
        .inflow_value("south inflow", Side::South, south)
        .unwrap();
    model.inflow_value("east inflow", Side::East, 9.0).unwrap();
    model
        .inflow_value("north inflow", Side::North, 9.5)
        .unwrap();
    let block: Vec<usize> = (10..13)
        .flat_map(|i| (6..9).map(move |j| grid.index(i, j)))
        .collect();
    model
        .prescribe_cells("warm foundation", block, 18.0)
        .unwrap();
    model
        .edge_exchange("surface", Side::North, 0.5, 8.0)
        .unwrap();
    model
        .point_source("heater", grid.index(4, 4), 30.0)
        .unwrap();
    model
}

fn swirl(scheme: AdvectionScheme, strength: f64) -> Model {
    let grid = Grid::new(24, 16).unwrap();
    swirl_model(Some(swirl_flows(grid, strength)), scheme)
}

#[test]
fn iterative_answer_matches_dense_lu_of_the_assembled_operator() {
    for scheme in [
        AdvectionScheme::Upwind,
        AdvectionScheme::Exponential,
        AdvectionScheme::PowerLaw,
    ] {
        for strength in [5.0, 50.0] {
            let system = swirl(scheme, strength).assemble().unwrap();
            let p = as_problem(&system);
            let exact = p.reference_solution();
            let kappa = condition_number(&p);
            let mut solver = system.default_solver().unwrap();
            *solver.options_mut() = SolveOptions::default()
                .tolerance(1e-11)
                .max_iterations(100_000);
            let mut x = system.initial_solution(10.0);
            let report = system
                .solve(&mut solver, &mut x, &mut Workspace::new())
                .unwrap();
            let free = p.free_cells();
            let diff: Vec<f64> = free.iter().map(|&k| x[k] - exact[k]).collect();
            let ef: Vec<f64> = free.iter().map(|&k| exact[k]).collect();
            let err = norm(&diff) / norm(&ef);
            let n = p.grid.cells() as f64;
            let bound = kappa * report.relative_residual() + 100.0 * n * EPS * kappa;
            println!(
                "{scheme:?}, strength {strength}: relative error {err:.2e}, bound {bound:.2e} (κ₂ {kappa:.2e}, {} iterations of {})",
                report.iterations, report.method
            );
            assert!(err <= bound, "{scheme:?}: {err:e} > {bound:e}");
        }
    }
}

/// A zero flow field changes no bit: operator, right-hand side, solution (with the default
/// solver, which sees a symmetric operator) and the conditions' budget lines equal those of
/// the model without advection; the flow-field line is zero. Steady and one transient step.
#[test]
fn zero_flow_field_changes_no_bit() {
    let bits = |v: &[f64]| v.iter().map(|x| x.to_bits()).collect::<Vec<u64>>();
    for scheme in [
        AdvectionScheme::Upwind,
        AdvectionScheme::Central,
        AdvectionScheme::Exponential,
        AdvectionScheme::PowerLaw,
    ] {
        let grid = Grid::new(24, 16).unwrap();
        let zero = FaceFlows::new(grid, vec![0.0; 25 * 16], vec![0.0; 24 * 17]).unwrap();
        let with = swirl_model(Some(zero), scheme);
        let without = swirl_model(None, scheme);
        let (a, b) = (with.assemble().unwrap(), without.assemble().unwrap());
        assert!(a.is_symmetric() && b.is_symmetric());
        let (pa, pb) = (as_problem(&a), as_problem(&b));
        for (ba, bb) in pa.bands.iter().zip(&pb.bands) {
            assert_eq!(bits(ba), bits(bb), "{scheme:?}: operator");
        }
        assert_eq!(bits(a.rhs()), bits(b.rhs()), "{scheme:?}: rhs");
        let solve = |s: &SteadySystem| {
            let mut solver = s.default_solver().unwrap();
            *solver.options_mut() = SolveOptions::default().tolerance(1e-12);
            let mut x = s.initial_solution(10.0);
            s.solve(&mut solver, &mut x, &mut Workspace::new()).unwrap();
            let budget = s.budget(&x).unwrap();
            (x, budget)
        };
        let ((xa, ba), (xb, bb)) = (solve(&a), solve(&b));
        assert_eq!(bits(&xa), bits(&xb), "{scheme:?}: solution");
        assert_eq!(ba.lines.len(), bb.lines.len() + 1);
        for (la, lb) in ba.lines.iter().zip(&bb.lines) {
            assert_eq!(la, lb);
            assert_eq!(la.inflow.to_bits(), lb.inflow.to_bits());
            assert_eq!(la.outflow.to_bits(), lb.outflow.to_bits());
        }
        let field = ba.lines.last().unwrap();
        assert_eq!((field.inflow, field.outflow), (0.0, 0.0));

        // One transient step of each scheme, same bits.
        for time in [TimeScheme::BackwardEuler, TimeScheme::CrankNicolson] {
            let initial = vec![10.0; grid.cells()];
            let step = |m: &Model| {
                let mut run =
                    Stepper::with_default_solver(m, time, 86_400.0, 0.0, &initial).unwrap();
                run.step().unwrap();
                run.step().unwrap();
                run.solution().to_vec()
            };
            assert_eq!(
                bits(&step(&with)),
                bits(&step(&without)),
                "{scheme:?}, {time:?}"
            );
        }
    }
}

/// A free edge cell where the flow enters with no inflow value is refused, naming the edge
/// and the cell; a cell held at a prescribed value needs none (the flow carries its value);
/// PCG's stepper refuses the non-symmetric step operator.
#[test]
fn inflow_without_a_value_and_pcg_are_refused() {
    let geometry = Geometry::cell_centered(6, 3, 1.0, 1.0, 1.0).unwrap();
    let mut model = Model::new(geometry.clone(), Conductivity::isotropic(1.0)).unwrap();
    model
        .set_advection(
            FaceFlows::uniform(&geometry, 0.5, 0.0, 1.0).unwrap(),
            AdvectionScheme::Upwind,
        )
        .unwrap();
    model.prescribe_edge("outlet", Side::East, 0.0).unwrap();
    let err = model.assemble().unwrap_err();
    assert_eq!(err.kind(), ErrorKind::NoInflowValue);
    assert_eq!(err.location().map(|at| at.cell), Some(0));
    assert!(err.to_string().contains("west edge"), "{err}");
    assert_eq!(err.value(), Some(0.5));
    // Prescribed cells along the west edge carry their own value in.
    let west: Vec<usize> = geometry.edge(Side::West);
    model.prescribe_cells("inlet cells", west, 1.0).unwrap();
    assert!(model.assemble().is_ok());
    model.set_storage(Storage::per_area(1.0)).unwrap();
    let err =
        Stepper::with_jacobi(&model, TimeScheme::BackwardEuler, 1.0, 0.0, &[0.0; 18]).unwrap_err();
    assert_eq!(err.kind(), ErrorKind::Asymmetric);
    assert!(err
        .hint()
        .is_some_and(|h| h.contains("with_default_solver")));
}

/// Changes in place with a flow field: a new conductivity re-assembled into the system's and
/// the stepper's storage gives the same bits as a fresh assembly (operator, right-hand side,
/// budget of the same solution), so the links of prescribed cells and the flow-field slots
/// are refreshed with the new coefficients.
#[test]
fn changes_in_place_match_a_fresh_assembly_with_advection() {
    let bits = |v: &[f64]| v.iter().map(|x| x.to_bits()).collect::<Vec<u64>>();
    let grid = Grid::new(24, 16).unwrap();
    let changed = Conductivity::anisotropic(0.7, 3.1);
    for scheme in [AdvectionScheme::Upwind, AdvectionScheme::PowerLaw] {
        let before = swirl(scheme, 40.0);
        let after = swirl_model_with(Some(swirl_flows(grid, 40.0)), scheme, changed.clone());
        let mut in_place = before.assemble().unwrap();
        in_place.set_conductivity(changed.clone()).unwrap();
        let fresh = after.assemble().unwrap();
        let (pa, pb) = (as_problem(&in_place), as_problem(&fresh));
        for (a, b) in pa.bands.iter().zip(&pb.bands) {
            assert_eq!(bits(a), bits(b), "{scheme:?}: operator");
        }
        assert_eq!(bits(in_place.rhs()), bits(fresh.rhs()));
        let x = pb.reference_solution();
        assert_eq!(in_place.budget(&x).unwrap(), fresh.budget(&x).unwrap());

        let initial = vec![10.0; grid.cells()];
        let stepper = |m: &Model| {
            Stepper::with_default_solver(m, TimeScheme::CrankNicolson, 600.0, 0.0, &initial)
                .unwrap()
        };
        let mut run = stepper(&before);
        run.set_conductivity(changed.clone()).unwrap();
        let other = stepper(&after);
        let (a, b) = (run.operator(), other.operator());
        for (x, y) in [
            (a.center(), b.center()),
            (a.west(), b.west()),
            (a.east(), b.east()),
            (a.south(), b.south()),
            (a.north(), b.north()),
        ] {
            assert_eq!(bits(x), bits(y), "{scheme:?}: step operator");
        }
        // The stepper's SIP factor was built from the old coefficients, so the iterates
        // differ; both solves reach the same solution to within their tolerance.
        let mut other = other;
        for r in [&mut run, &mut other] {
            *r.solver_mut().options_mut() = SolveOptions::default().tolerance(1e-12);
            r.step().unwrap();
        }
        let diff: Vec<f64> = run
            .solution()
            .iter()
            .zip(other.solution())
            .map(|(a, b)| a - b)
            .collect();
        assert!(norm(&diff) <= 1e-9 * norm(other.solution()));
    }
}

/// New flows in place (`set_flows`) give the bits of a fresh assembly with those flows; flows
/// entering where no inflow value is given are refused and leave the system as it was; a
/// stepper set up symmetric refuses flows that would make it non-symmetric.
#[test]
fn new_flows_in_place_match_a_fresh_assembly() {
    let bits = |v: &[f64]| v.iter().map(|x| x.to_bits()).collect::<Vec<u64>>();
    let grid = Grid::new(24, 16).unwrap();
    let scheme = AdvectionScheme::Exponential;
    let mut system = swirl(scheme, 10.0).assemble().unwrap();
    system.set_flows(swirl_flows(grid, 55.0)).unwrap();
    let fresh = swirl(scheme, 55.0).assemble().unwrap();
    let (pa, pb) = (as_problem(&system), as_problem(&fresh));
    for (a, b) in pa.bands.iter().zip(&pb.bands) {
        assert_eq!(bits(a), bits(b));
    }
    assert_eq!(bits(system.rhs()), bits(fresh.rhs()));
    let x = pb.reference_solution();
    assert_eq!(system.budget(&x).unwrap(), fresh.budget(&x).unwrap());

    // A model with inflow values on the west edge only: flows entering from the east are
    // refused, naming the edge, and the system keeps its operator.
    let geometry = Geometry::cell_centered(8, 3, 1.0, 1.0, 1.0).unwrap();
    let mut model = Model::new(geometry.clone(), Conductivity::isotropic(1.0)).unwrap();
    model
        .set_advection(
            FaceFlows::uniform(&geometry, 1.0, 0.0, 1.0).unwrap(),
            AdvectionScheme::Upwind,
        )
        .unwrap();
    model.inflow_value("west", Side::West, 1.0).unwrap();
    model.prescribe_edge("east", Side::East, 0.0).unwrap();
    let mut system = model.assemble().unwrap();
    let before = as_problem(&system).bands;
    let err = system
        .set_flows(FaceFlows::uniform(&geometry, -1.0, 0.0, 1.0).unwrap())
        .unwrap_err();
    assert_eq!(err.kind(), ErrorKind::NoInflowValue);
    assert!(err.to_string().contains("east edge"), "{err}");
    assert_eq!(as_problem(&system).bands, before);

    model
        .set_advection(
            FaceFlows::uniform(&geometry, 0.0, 0.0, 1.0).unwrap(),
            AdvectionScheme::Upwind,
        )
        .unwrap();
    model.set_storage(Storage::per_area(1.0)).unwrap();
    let mut run =
        Stepper::with_jacobi(&model, TimeScheme::BackwardEuler, 1.0, 0.0, &[0.0; 24]).unwrap();
    let err = run
        .set_flows(FaceFlows::uniform(&geometry, 1.0, 0.0, 1.0).unwrap())
        .unwrap_err();
    assert_eq!(err.kind(), ErrorKind::InvalidSetting);
    run.step().unwrap();
}
