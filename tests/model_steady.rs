//! Steady model assembly against closed-form solutions: plane walls with uniform heat
//! generation, a composite wall in series, and Thiem's radial flow to a well; and the
//! model's default driver on a layered wall and on a strongly anisotropic section.
//!
//! Error bounds for the "exact to rounding" checks: the discrete solution satisfies the
//! discrete equations to the relative residual `ρ` the driver reports, so
//! `‖e‖₂ ≤ κ(A)·ρ·‖T‖₂`, with `κ` the condition number of the free-cell matrix (computed here
//! with a dense symmetric eigensolver, these systems being small). Rounding adds a few ulps of
//! the coefficients (`κ·4ε·‖T‖₂`) and of the node positions (`|T'|max · N·ε·length`).

use nalgebra::{DMatrix, SymmetricEigen};
use quintet::model::{Axis, Conductivity, Geometry, Model, SteadySystem};
use quintet::prelude::*;

const EPS: f64 = f64::EPSILON;

/// Solve to a relative residual of `tol`; returns the solution and the achieved residual.
fn solve(system: &SteadySystem, tol: f64) -> (Vec<f64>, f64) {
    let mut x = system.initial_solution(0.0);
    let mut pcg = Pcg::new(Jacobi::new(system.operator()).unwrap()).with_options(
        SolveOptions::default()
            .tolerance(tol)
            .max_iterations(200_000),
    );
    let report = system
        .solve(&mut pcg, &mut x, &mut Workspace::new())
        .unwrap();
    (x, report.relative_residual())
}

/// Condition number of the free-cell matrix, from a dense eigendecomposition.
fn condition_number(system: &SteadySystem) -> f64 {
    let op = system.operator();
    let grid = op.grid();
    let fixed = op.fixed_cells();
    let free: Vec<usize> = (0..grid.cells())
        .filter(|&k| !fixed.is_some_and(|f| f.contains(k)))
        .collect();
    let index = |k: usize| free.iter().position(|&f| f == k);
    let mut a = DMatrix::<f64>::zeros(free.len(), free.len());
    for (row, &k) in free.iter().enumerate() {
        let (i, j) = grid.coords(k);
        let c = op.eliminated_coeffs(i, j);
        a[(row, row)] = c.center;
        for side in Side::ALL {
            if let Some(col) = grid.neighbour(k, side).and_then(index) {
                a[(row, col)] = c.towards(side);
            }
        }
    }
    let eig = SymmetricEigen::new(a).eigenvalues;
    let max = eig.iter().cloned().fold(f64::MIN, f64::max);
    let min = eig.iter().cloned().fold(f64::MAX, f64::min);
    assert!(min > 0.0, "free-cell matrix must be positive definite");
    max / min
}

fn norm2(v: &[f64]) -> f64 {
    v.iter().map(|x| x * x).sum::<f64>().sqrt()
}

/// The bound described in the file header.
fn rounding_bound(kappa: f64, rho: f64, exact: &[f64], slope: f64, length: f64) -> f64 {
    let n = exact.len() as f64;
    kappa * (rho + 4.0 * EPS) * norm2(exact) + slope * n * EPS * length
}

/// Incropera & DeWitt, *Fundamentals of Heat and Mass Transfer*, §3.5 (plane wall with uniform
/// generation, surfaces at T₁ and T₂), the parabolic profile (eq. 3.41 in the 6th edition,
/// numbering from memory): `T(x) = q̇L²/(2k)·(1 − x²/L²) + (T₂ − T₁)/2·x/L + (T₁ + T₂)/2` on
/// `−L ≤ x ≤ L`. A node-centred axis is exact for it; the surface heat fluxes are
/// `−k·dT/dx` at `x = ±L`, and together they carry away `q̇·2L` per unit area.
#[test]
fn plane_wall_with_generation_between_fixed_temperatures() {
    let (half, k, q, t1, t2) = (0.05, 15.0, 1.0e6, 80.0, 40.0); // m, W/(m·K), W/m³, °C, °C
    let intervals = 20;
    let dx = 2.0 * half / intervals as f64;
    let geometry = Geometry::new(
        Axis::uniform_nodes(intervals + 1, dx).unwrap(),
        Axis::uniform_cells(1, 1.0).unwrap(),
        1.0,
    )
    .unwrap();
    let mut model = Model::new(geometry.clone(), Conductivity::isotropic(k)).unwrap();
    let west = model.prescribe_edge("face 1", Side::West, t1).unwrap();
    let east = model.prescribe_edge("face 2", Side::East, t2).unwrap();
    let generation = model.volumetric_source("generation", q).unwrap();
    let system = model.assemble().unwrap();
    let (t, rho) = solve(&system, 1e-12);

    let exact = |x: f64| {
        let s = x - half;
        q * half * half / (2.0 * k) * (1.0 - s * s / (half * half))
            + (t2 - t1) / 2.0 * s / half
            + (t1 + t2) / 2.0
    };
    let exact_t: Vec<f64> = (0..=intervals)
        .map(|n| exact(geometry.position(n).0))
        .collect();
    let slope = q * half / k + (t1 - t2).abs() / (2.0 * half);
    let bound = rounding_bound(condition_number(&system), rho, &exact_t, slope, 2.0 * half);
    let err = t
        .iter()
        .zip(&exact_t)
        .map(|(a, b)| (a - b).abs())
        .fold(0.0, f64::max);
    println!("plane wall, fixed faces: max error {err:.3e} K (bound {bound:.3e} K)");
    assert!(err <= bound, "error {err:e} exceeds {bound:e}");

    // Surface fluxes (W/m², the wall is 1 m x 1 m): out through x = +L, q̇L − k(T₂−T₁)/(2L);
    // out through x = −L, q̇L + k(T₂−T₁)/(2L).
    let budget = system.budget(&t).unwrap();
    let out_east = q * half - k * (t2 - t1) / (2.0 * half);
    let out_west = q * half + k * (t2 - t1) / (2.0 * half);
    let flux_tol = 2.0 * k / dx * bound + 64.0 * EPS * q * half;
    let got_w = budget.line(west).unwrap().net();
    let got_e = budget.line(east).unwrap().net();
    println!(
        "  surface heat flow west {got_w:.9e} (exact {:.9e}), east {got_e:.9e} (exact {:.9e}) W",
        -out_west, -out_east
    );
    assert!((got_w + out_west).abs() <= flux_tol);
    assert!((got_e + out_east).abs() <= flux_tol);
    let generated = budget.line(generation).unwrap().inflow;
    assert!((generated - q * 2.0 * half).abs() <= 64.0 * EPS * q * half);
}

/// Incropera & DeWitt, §3.5: a wall of thickness 2L with uniform generation and both faces
/// cooled by a fluid at T∞ (coefficient h) is symmetric; its half `0 ≤ x ≤ L` has an adiabatic
/// mid-plane and the profile `T(x) = q̇L²/(2k)·(1 − x²/L²) + T_s` with surface temperature
/// `T_s = T∞ + q̇L/h` (eqs. 3.42 and 3.46 in the 6th edition, numbering from memory).
#[test]
fn plane_wall_with_generation_and_a_convective_face() {
    let (half, k, q, h, t_inf) = (0.02, 0.8, 2.0e5, 40.0, 25.0);
    let intervals = 16;
    let dx = half / intervals as f64;
    let geometry = Geometry::new(
        Axis::uniform_nodes(intervals + 1, dx).unwrap(),
        Axis::uniform_cells(1, 1.0).unwrap(),
        1.0,
    )
    .unwrap();
    let mut model = Model::new(geometry.clone(), Conductivity::isotropic(k)).unwrap();
    // West: the adiabatic mid-plane (no condition). East: convection.
    let fluid = model
        .edge_exchange("coolant", Side::East, h, t_inf)
        .unwrap();
    model.volumetric_source("generation", q).unwrap();
    let system = model.assemble().unwrap();
    let (t, rho) = solve(&system, 1e-12);

    let ts = t_inf + q * half / h;
    let exact_t: Vec<f64> = (0..=intervals)
        .map(|n| {
            let x = geometry.position(n).0;
            q * half * half / (2.0 * k) * (1.0 - x * x / (half * half)) + ts
        })
        .collect();
    let bound = rounding_bound(condition_number(&system), rho, &exact_t, q * half / k, half);
    let err = t
        .iter()
        .zip(&exact_t)
        .map(|(a, b)| (a - b).abs())
        .fold(0.0, f64::max);
    println!("plane wall, convective face: max error {err:.3e} K (bound {bound:.3e} K)");
    assert!(err <= bound);
    // All the heat generated in the half wall, q̇L per m², leaves through the fluid.
    let budget = system.budget(&t).unwrap();
    let convected = budget.line(fluid).unwrap().outflow;
    assert!((convected - q * half).abs() <= h * bound + 64.0 * EPS * q * half);
}

/// The same wall held at T₁ on one face and cooled by convection on the other, solved by the
/// method of Incropera & DeWitt §3.5 with the convection condition of §2.4:
/// `T = T₁ + C₁x − q̇x²/(2k)`, `C₁ = [q̇L(1 + hL/(2k)) − h(T₁ − T∞)]/(k + hL)`.
#[test]
fn plane_wall_with_one_fixed_and_one_convective_face() {
    let (len, k, q, h, t1, t_inf) = (0.1, 2.5, 5.0e4, 120.0, 60.0, 15.0);
    let intervals = 25;
    let dx = len / intervals as f64;
    let geometry = Geometry::new(
        Axis::uniform_nodes(intervals + 1, dx).unwrap(),
        Axis::uniform_cells(1, 1.0).unwrap(),
        1.0,
    )
    .unwrap();
    let mut model = Model::new(geometry.clone(), Conductivity::isotropic(k)).unwrap();
    model.prescribe_edge("held face", Side::West, t1).unwrap();
    model.edge_exchange("air", Side::East, h, t_inf).unwrap();
    model.volumetric_source("generation", q).unwrap();
    let system = model.assemble().unwrap();
    let (t, rho) = solve(&system, 1e-12);

    let c1 = (q * len * (1.0 + h * len / (2.0 * k)) - h * (t1 - t_inf)) / (k + h * len);
    let exact_t: Vec<f64> = (0..=intervals)
        .map(|n| {
            let x = geometry.position(n).0;
            t1 + c1 * x - q * x * x / (2.0 * k)
        })
        .collect();
    let slope = c1.abs() + q * len / k;
    let bound = rounding_bound(condition_number(&system), rho, &exact_t, slope, len);
    let err = t
        .iter()
        .zip(&exact_t)
        .map(|(a, b)| (a - b).abs())
        .fold(0.0, f64::max);
    println!("plane wall, fixed + convective faces: max error {err:.3e} K (bound {bound:.3e} K)");
    assert!(err <= bound);
}

/// Incropera & DeWitt §3.1 (the composite wall): two layers in series between surface
/// temperatures T₁ and T₃ carry `q'' = (T₁ − T₃)/(L_A/k_A + L_B/k_B)`, and the interface sits
/// at `T₂ = T₁ − q''·L_A/k_A`; the profile is linear in each layer. Cell-centred, with
/// different cell widths in the two layers and the interface on a cell face.
#[test]
fn composite_wall_in_series() {
    let (la, lb, ka, kb, t1, t3) = (0.10, 0.03, 0.72, 0.038, 21.0, -8.0); // brick, insulation
    let (na, nb) = (5, 6);
    let mut widths = vec![la / na as f64; na];
    widths.extend(vec![lb / nb as f64; nb]);
    let geometry = Geometry::new(
        Axis::cells(widths).unwrap(),
        Axis::uniform_cells(1, 1.0).unwrap(),
        1.0,
    )
    .unwrap();
    let k: Vec<f64> = (0..na + nb).map(|i| if i < na { ka } else { kb }).collect();
    let mut model = Model::new(geometry.clone(), Conductivity::isotropic(k)).unwrap();
    let inside = model
        .prescribe_edge("inside surface", Side::West, t1)
        .unwrap();
    let outside = model
        .prescribe_edge("outside surface", Side::East, t3)
        .unwrap();
    let system = model.assemble().unwrap();
    let (t, rho) = solve(&system, 1e-12);

    let flux = (t1 - t3) / (la / ka + lb / kb);
    let t2 = t1 - flux * la / ka;
    let exact_t: Vec<f64> = (0..na + nb)
        .map(|i| {
            let x = geometry.position(i).0;
            if x < la {
                t1 - flux * x / ka
            } else {
                t2 - flux * (x - la) / kb
            }
        })
        .collect();
    let bound = rounding_bound(condition_number(&system), rho, &exact_t, flux / kb, la + lb);
    let err = t
        .iter()
        .zip(&exact_t)
        .map(|(a, b)| (a - b).abs())
        .fold(0.0, f64::max);
    // The interface temperature by extending the layer-A profile through its last two nodes
    // (independent of the face formula), and the flux through both surfaces from the budget.
    let slope_a = (t[na - 1] - t[na - 2]) / (la / na as f64);
    let t2_num = t[na - 1] + slope_a * 0.5 * la / na as f64;
    let budget = system.budget(&t).unwrap();
    let q_in = budget.line(inside).unwrap().net();
    let q_out = -budget.line(outside).unwrap().net();
    println!(
        "composite wall: max error {err:.3e} K (bound {bound:.3e}); T2 = {t2_num:.12} (exact {t2:.12}); \
         q'' in {q_in:.12}, out {q_out:.12} (exact {flux:.12}) W/m²"
    );
    assert!(err <= bound);
    assert!((t2_num - t2).abs() <= 2.0 * bound);
    let flux_tol = 2.0 * (2.0 * kb / (lb / nb as f64)) * bound;
    assert!((q_in - flux).abs() <= flux_tol && (q_out - flux).abs() <= flux_tol);
}

/// One Thiem run: a square of `n` cells of `a` metres around a pumping well in the centre
/// cell, edge cells held at the analytic head. Returns the heads and the analytic heads.
fn thiem_run(n: usize, a: f64) -> (Geometry, Vec<f64>, Vec<f64>) {
    let (k, b, q, radius, h_r) = (1.5e-4, 20.0, 0.012, 1000.0, 50.0); // m/s, m, m³/s, m, m
    let transmissivity = k * b;
    let geometry = Geometry::cell_centered(n, n, a, a, b).unwrap();
    let grid = geometry.grid();
    let centre = (n as f64) * a / 2.0;
    let r_of = |cell: usize| {
        let (x, y) = geometry.position(cell);
        ((x - centre).powi(2) + (y - centre).powi(2)).sqrt()
    };
    let exact =
        |r: f64| h_r - q / (2.0 * std::f64::consts::PI * transmissivity) * (radius / r).ln();
    let mut model = Model::new(geometry.clone(), Conductivity::isotropic(k)).unwrap();
    let edge = grid.edge_cells();
    let edge_heads: Vec<f64> = edge.iter().map(|&c| exact(r_of(c))).collect();
    model
        .prescribe_cells("outer ring", edge, edge_heads)
        .unwrap();
    model
        .point_source("pumping well", grid.index(n / 2, n / 2), -q)
        .unwrap();
    let system = model.assemble().unwrap();
    let (h, _) = solve(&system, 1e-12);
    let exact_h = (0..grid.cells())
        .map(|c| {
            let r = r_of(c);
            if r > 0.0 {
                exact(r)
            } else {
                f64::NAN
            }
        })
        .collect();
    (geometry, h, exact_h)
}

/// Thiem (1906), steady radial flow to a well in a confined aquifer:
/// `h(r) = h(R) − Q/(2πT)·ln(R/r)`, here with R = 1 km, the radius of influence, beyond the
/// model's edge. Heads at r ≥ 3 cells must lie within 1 % of the drawdown `h(R) − h(r)` there,
/// and come closer on refinement (cells a third the size): at the same points, the error of a
/// second-order scheme falls about ninefold. The well is a point source in one cell, so no
/// well radius enters: heads in the well cell itself are not compared.
#[test]
fn thiem_radial_flow_to_a_well() {
    let (n0, a0) = (51, 10.0);
    let (n1, a1) = (153, 10.0 / 3.0);
    let h_r = 50.0;
    let mut worst = Vec::new();
    let mut runs = Vec::new();
    for (n, a) in [(n0, a0), (n1, a1)] {
        let (geometry, h, exact) = thiem_run(n, a);
        let centre = n as f64 * a / 2.0;
        let mut max_rel: f64 = 0.0;
        for c in 0..geometry.grid().cells() {
            let (x, y) = geometry.position(c);
            let r = ((x - centre).powi(2) + (y - centre).powi(2)).sqrt();
            if r >= 3.0 * a - 1e-9 {
                let drawdown = h_r - exact[c];
                max_rel = max_rel.max((h[c] - exact[c]).abs() / drawdown);
            }
        }
        println!("Thiem, {n} x {n} cells of {a:.3} m: largest error at r >= 3 cells = {:.4} % of the drawdown", 100.0 * max_rel);
        assert!(max_rel < 0.01, "{} % exceeds 1 %", 100.0 * max_rel);
        worst.push(max_rel);
        runs.push((geometry, h, exact, centre));
    }
    assert!(worst[1] < worst[0]);
    // The same physical points, on both grids: 30 m and 60 m east and north-east of the well.
    for (dx, dy) in [(30.0, 0.0), (60.0, 0.0), (30.0, 30.0), (60.0, 60.0)] {
        let errs: Vec<f64> = runs
            .iter()
            .map(|(g, h, e, centre)| {
                let c = g.cell_at(centre + dx, centre + dy).unwrap();
                let (x, y) = g.position(c);
                assert!((x - centre - dx).abs() < 1e-9 && (y - centre - dy).abs() < 1e-9);
                (h[c] - e[c]).abs()
            })
            .collect();
        let order = (errs[0] / errs[1]).ln() / 3f64.ln();
        println!(
            "  at ({dx}, {dy}) m: error {:.3e} -> {:.3e} m, observed order {order:.2}",
            errs[0], errs[1]
        );
        // Second order: the error at a fixed point falls by 3² when the cells shrink by 3. The
        // coarse grid's point 3 cells from the well is not yet in the asymptotic range (the
        // next term is smaller by about (a/r)²), hence ±0.25 rather than ±0.15.
        assert!((order - 2.0).abs() <= 0.25, "order {order}");
    }
}

/// The model's own driver for a symmetric system is PCG with the multigrid V-cycle: on a wall
/// of eight layers in series (conductivity contrast 10³, grids of 32² to 256² cells) it meets
/// the composite-wall profile of Incropera & DeWitt §3.1 (series resistances, as above) within
/// the rounding bound of the file header, and its iteration count does not grow with the grid
/// (multigrid's grid-independent convergence rate; Hackbusch, *Multi-Grid Methods and
/// Applications*, 1985, ch. 6, from memory). A Jacobi-preconditioned PCG needs a count that
/// grows with `n` (√κ grows like `n`).
#[test]
fn the_default_driver_for_conduction_is_multigrid_pcg_with_a_grid_independent_count() {
    let (width, t1, t3) = (0.4, 80.0, 20.0);
    let (steel, insulation) = (45.0, 0.045);
    let mut counts = Vec::new();
    for n in [32, 128, 256] {
        let dx = width / n as f64;
        let geometry = Geometry::cell_centered(n, n, dx, dx, 0.01).unwrap();
        let layer = |i: usize| {
            if (8 * i / n) % 2 == 0 {
                steel
            } else {
                insulation
            }
        };
        let k: Vec<f64> = (0..n * n).map(|c| layer(c % n)).collect();
        let mut model = Model::new(geometry.clone(), Conductivity::isotropic(k)).unwrap();
        model.prescribe_edge("hot face", Side::West, t1).unwrap();
        model.prescribe_edge("cold face", Side::East, t3).unwrap();
        let system = model.assemble().unwrap();
        let mut solver = system.default_solver().unwrap();
        solver.options_mut().tolerances.relative = 1e-10;
        let mut t = system.initial_solution(50.0);
        let report = system
            .solve(&mut solver, &mut t, &mut Workspace::new())
            .unwrap();
        assert_eq!(report.method, "PCG + multigrid V-cycle");
        counts.push(report.iterations);
        // Series resistances per unit area: each cell's width over its conductivity.
        let resistance: f64 = (0..n).map(|i| dx / layer(i)).sum();
        let flux = (t1 - t3) / resistance;
        let exact: Vec<f64> = (0..n * n)
            .map(|c| {
                let i = c % n;
                let before: f64 = (0..i).map(|m| dx / layer(m)).sum();
                t1 - flux * (before + 0.5 * dx / layer(i))
            })
            .collect();
        let err = t
            .iter()
            .zip(&exact)
            .map(|(a, b)| (a - b).abs())
            .fold(0.0, f64::max);
        println!(
            "{n}x{n} layered wall, default driver: {} iterations, max error {err:.3e} K",
            report.iterations
        );
        if n == 32 {
            let kappa = condition_number(&system);
            let rho = report.relative_residual();
            let bound = rounding_bound(kappa, rho, &exact, flux / insulation, width);
            assert!(err <= bound, "error {err:e} above the bound {bound:e}");
        }
    }
    assert!(counts.iter().all(|&c| c <= 12), "counts {counts:?}");
    assert!(counts[2] <= counts[0] + 2, "counts {counts:?}");
}

/// Strong anisotropy (a vertical section of layered sediments: `kx/ky = 1000` on square cells)
/// is where a point smoother stops smoothing across the weak direction (Trottenberg,
/// Oosterlee & Schüller, *Multigrid*, 2001, §5.1, from memory), so the default driver needs
/// more iterations than on an isotropic field; it still needs far fewer than PCG + Jacobi (the
/// previous default). With the edges across the strong direction held and the others
/// insulated, the exact discrete solution is the linear profile along x whatever `ky` is
/// (Fourier's law in one dimension), which both drivers must reach.
#[test]
fn the_default_driver_on_strong_anisotropy_beats_jacobi() {
    let (nx, ny, dx) = (513, 257, 0.1);
    let geometry = Geometry::cell_centered(nx, ny, dx, dx, 1.0).unwrap();
    let mut model = Model::new(geometry, Conductivity::anisotropic(10.0, 0.01)).unwrap();
    model.prescribe_edge("west", Side::West, 1.0).unwrap();
    model.prescribe_edge("east", Side::East, 0.0).unwrap();
    let system = model.assemble().unwrap();
    let length = nx as f64 * dx;
    let exact: Vec<f64> = (0..nx * ny)
        .map(|c| 1.0 - ((c % nx) as f64 + 0.5) * dx / length)
        .collect();
    // A bound on the condition number: λmax ≤ twice the largest center (Gershgorin), and the
    // y couplings add a positive semidefinite part, so λmin is at least that of the x part
    // alone: one row's tridiagonal matrix (dense eigensolver), the same in every row.
    let op = system.operator();
    let row = |i: usize| op.coeffs(i, ny / 2);
    let mut tx = DMatrix::<f64>::zeros(nx, nx);
    for i in 0..nx {
        let c = row(i);
        tx[(i, i)] = c.center + c.south + c.north;
        if i + 1 < nx {
            (tx[(i, i + 1)], tx[(i + 1, i)]) = (c.east, c.east);
        }
    }
    let lambda_min = SymmetricEigen::new(tx).eigenvalues.min();
    let max_center = (0..nx * ny)
        .map(|k| op.coeffs(k % nx, k / nx).center)
        .fold(0.0, f64::max);
    let kappa = 2.0 * max_center / lambda_min;
    let mut counts = Vec::new();
    let jacobi = Pcg::new(Jacobi::new(system.operator()).unwrap());
    let drivers: [Box<dyn IterativeSolver<f64>>; 2] =
        [system.default_solver().unwrap(), Box::new(jacobi)];
    for mut driver in drivers {
        driver.options_mut().tolerances.relative = 1e-10;
        driver.options_mut().tolerances.max_iterations = Some(100_000);
        let mut t = system.initial_solution(0.5);
        let report = system
            .solve(&mut driver, &mut t, &mut Workspace::new())
            .unwrap();
        let diff: Vec<f64> = t.iter().zip(&exact).map(|(a, b)| a - b).collect();
        let err = norm2(&diff);
        let bound = rounding_bound(
            kappa,
            report.relative_residual(),
            &exact,
            1.0 / length,
            length,
        );
        println!(
            "{}: {} iterations, error {err:.2e} (bound {bound:.2e}, κ ≤ {kappa:.2e})",
            report.method, report.iterations
        );
        assert!(err <= bound, "error {err:e} above {bound:e}");
        counts.push(report.iterations);
    }
    assert!(5 * counts[0] <= counts[1], "counts {counts:?}");
}
