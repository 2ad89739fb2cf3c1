//! The one registry of engines: every driver (with every preconditioner PCG ships) and every
//! preconditioner, as the cross-driver tests iterate them. A new driver or preconditioner is
//! covered by reference agreement, determinism, stopping, allocation, lost-work and
//! reduction-counting tests by adding one line here.

use quintet::prelude::*;

/// What an engine can be trusted to solve.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Reach {
    /// Any symmetric positive definite system (a Krylov method with an SPD preconditioner).
    Spd,
    /// SPD systems whose couplings are all conductances (M-matrices): multigrid's coarse
    /// operators and Stone's factor assume them.
    MMatrix,
    /// Any non-singular system with strictly diagonally dominant free rows, symmetric or not
    /// (BiCGSTAB and GMRES with a preconditioner built for general operators): every cross-
    /// driver test on symmetric problems, and the non-symmetric property tests
    /// (`common::nonsymmetric_problems`).
    General,
    /// M-matrix systems, with a preconditioner that is not positive definite on every one of
    /// them (the symmetrised SIP inverse `½·((LU)⁻¹ + (LU)⁻ᵀ)`, see `Sip`'s docs): the solve
    /// either matches the reference or stops with `PreconditionerNotPositive`, nothing else.
    MMatrixOrRefuses,
}

/// A driver, boxed.
pub type Driver = Box<dyn IterativeSolver<f64>>;

/// One driver, built for an operator.
pub struct Engine {
    pub name: &'static str,
    pub reach: Reach,
    /// Needs many iterations (steepest descent, Gauss–Seidel, Stone's iteration): tests keep
    /// its problems small or its tolerance loose.
    pub slow: bool,
    build: fn(&Banded5<f64>) -> Result<Driver, Error>,
}

impl Engine {
    /// The driver for `op` (preconditioners set up from `op`), stopping by `options`.
    pub fn solver(&self, op: &Banded5<f64>, options: SolveOptions) -> Driver {
        let mut solver =
            (self.build)(op).unwrap_or_else(|e| panic!("{}: set-up failed: {e}", self.name));
        *solver.options_mut() = options;
        solver
    }

    /// Whether the engine is meant for problems of this kind (`m_matrix`: every coupling
    /// non-positive).
    pub fn handles(&self, m_matrix: bool) -> bool {
        matches!(self.reach, Reach::Spd | Reach::General) || m_matrix
    }

    /// Whether the engine is meant for non-symmetric (diagonally dominant) systems.
    pub fn handles_nonsymmetric(&self) -> bool {
        self.reach == Reach::General
    }

    /// Whether `e` is the one honest refusal this engine is allowed on a problem it handles.
    pub fn may_refuse_with(&self, e: &Error) -> bool {
        self.reach == Reach::MMatrixOrRefuses && e.kind() == ErrorKind::PreconditionerNotPositive
    }
}

fn boxed(s: impl IterativeSolver<f64> + 'static) -> Result<Driver, Error> {
    Ok(Box::new(s))
}

/// Every driver of the crate, one line each.
pub fn engines() -> Vec<Engine> {
    use Reach::*;
    let e = |name, reach, slow, build| Engine {
        name,
        reach,
        slow,
        build,
    };
    vec![
        e("steepest descent", Spd, true, |_| {
            boxed(SteepestDescent::default())
        }),
        e("CG", Spd, false, |_| boxed(Cg::default())),
        e("PCG + Jacobi", Spd, false, |op| {
            boxed(Pcg::new(Jacobi::new(op)?))
        }),
        e("PCG + SSOR", Spd, false, |op| {
            boxed(Pcg::new(Ssor::new(op, 1.5)?))
        }),
        e("PCG + IC(0)", Spd, false, |op| {
            boxed(Pcg::new(IncompleteCholesky::ic0(op)?))
        }),
        e("PCG + MIC(0)", Spd, false, |op| {
            boxed(Pcg::new(IncompleteCholesky::mic0(op)?))
        }),
        e("PCG + symmetrised SIP", MMatrixOrRefuses, false, |op| {
            boxed(Pcg::new(Sip::new(op, SipSettings::default())?))
        }),
        e("PCG + multigrid", MMatrix, false, |op| {
            boxed(Pcg::new(Multigrid::new(op, MultigridSettings::default())?))
        }),
        e("PCG + multigrid, lumped Galerkin", MMatrix, false, |op| {
            let settings = MultigridSettings {
                coarse_operator: CoarseOperator::LumpedGalerkin,
                ..Default::default()
            };
            boxed(Pcg::new(Multigrid::new(op, settings)?))
        }),
        e("PCG + f32 multigrid", MMatrix, false, |op| {
            let single = op.cast::<f32>()?;
            let mg = Multigrid::new(&single, MultigridSettings::default())?;
            boxed(Pcg::new(SinglePrecision::new(single, mg)))
        }),
        e("SOR", Spd, true, |_| boxed(Sor::new(1.5)?)),
        e("SOR, red-black", Spd, true, |_| {
            boxed(Sor::new(1.5)?.ordering(SweepOrder::RedBlack))
        }),
        e("Gauss-Seidel", Spd, true, |_| boxed(Sor::gauss_seidel())),
        e("Stone's SIP", MMatrix, true, |op| {
            boxed(Sip::new(op, SipSettings::default())?)
        }),
        e("multigrid", MMatrix, false, |op| {
            boxed(Multigrid::new(op, MultigridSettings::default())?)
        }),
        // Drivers for general systems: Saad & Schultz 1986 (GMRES), van der Vorst 1992
        // (BiCGSTAB). GMRES(5) restarts many times on the test problems.
        e("BiCGSTAB", General, false, |_| boxed(BiCgStab::default())),
        e("BiCGSTAB + Jacobi", General, false, |op| {
            boxed(BiCgStab::new(Jacobi::new(op)?))
        }),
        e("BiCGSTAB + SSOR", Spd, false, |op| {
            boxed(BiCgStab::new(Ssor::new(op, 1.5)?))
        }),
        e("GMRES(30)", General, false, |_| boxed(Gmres::default())),
        e("GMRES(30) + Jacobi", General, false, |op| {
            boxed(Gmres::new(Jacobi::new(op)?))
        }),
        // Restarted many times; on the non-symmetric test problems (positive definite
        // symmetric part) GMRES(m) converges for any m without a preconditioner (Eisenstat,
        // Elman & Schultz 1983), which a Jacobi scaling would not keep.
        e("GMRES(5)", General, false, |_| {
            boxed(Gmres::default().with_restart(5)?)
        }),
        e("GMRES(30) + IC(0)", Spd, false, |op| {
            boxed(Gmres::new(IncompleteCholesky::ic0(op)?))
        }),
        // ILU(0) exists for strictly diagonally dominant matrices with a positive diagonal
        // (H-matrices; Meijerink & van der Vorst 1977 for M-matrices, Manteuffel 1980 for
        // H-matrices, from memory), so it goes with every non-symmetric test problem.
        e("BiCGSTAB + ILU(0)", General, false, |op| {
            boxed(BiCgStab::new(Ilu0::new(op)?))
        }),
        e("GMRES(30) + ILU(0)", General, false, |op| {
            boxed(Gmres::new(Ilu0::new(op)?))
        }),
        // Stone's factor and the multigrid hierarchy assume conductances (M-matrices).
        e("BiCGSTAB + SIP", MMatrix, false, |op| {
            let plain = SipSettings {
                symmetrised: false,
                ..Default::default()
            };
            boxed(BiCgStab::new(Sip::new(op, plain)?))
        }),
        e("BiCGSTAB + multigrid", MMatrix, false, |op| {
            boxed(BiCgStab::new(Multigrid::new(
                op,
                MultigridSettings::default(),
            )?))
        }),
        e("GMRES(30) + multigrid", MMatrix, false, |op| {
            boxed(Gmres::new(Multigrid::new(
                op,
                MultigridSettings::default(),
            )?))
        }),
        e("mixed-precision refinement", Spd, false, |op| {
            let single = op.cast::<f32>()?;
            let jacobi = Jacobi::new(&single)?;
            boxed(MixedRefinement::with_preconditioner(single, jacobi)?)
        }),
    ]
}

/// Every preconditioner of the crate, set up from `op`, one line each.
pub fn preconditioners(op: &Banded5<f64>) -> Vec<Box<dyn Preconditioner<f64>>> {
    let single = op.cast::<f32>().expect("finite coefficients");
    let mg32 = Multigrid::new(&single, MultigridSettings::default()).expect("set-up");
    let lumped = MultigridSettings {
        coarse_operator: CoarseOperator::LumpedGalerkin,
        ..Default::default()
    };
    let plain_sip = SipSettings {
        symmetrised: false,
        ..Default::default()
    };
    vec![
        Box::new(Identity),
        Box::new(Jacobi::new(op).expect("set-up")),
        Box::new(Ssor::new(op, 1.4).expect("set-up")),
        Box::new(IncompleteCholesky::ic0(op).expect("set-up")),
        Box::new(IncompleteCholesky::mic0(op).expect("set-up")),
        Box::new(Sip::new(op, SipSettings::default()).expect("set-up")),
        Box::new(Sip::new(op, plain_sip).expect("set-up")),
        Box::new(Ilu0::new(op).expect("set-up")),
        Box::new(Multigrid::new(op, MultigridSettings::default()).expect("set-up")),
        Box::new(Multigrid::new(op, lumped).expect("set-up")),
        Box::new(SinglePrecision::new(single, mg32)),
    ]
}
