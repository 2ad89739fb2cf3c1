//! Restarted GMRES(m) for general (non-symmetric) systems, right-preconditioned.

use crate::blocks::zero_fixed;
use crate::iterate::{run, Breakdown, Context, Method, Requires, Residual, Step, Task};
use crate::iterate::{IterativeSolver, NameCache, SolveOptions, Workspace};
use crate::precond::{Identity, Preconditioner};
use crate::scalar::{lit, to_f64};
use crate::{Error, ErrorKind, LinearOperator, Progress, Report, Scalar};

/// The restart length [`Gmres::new`] uses.
const DEFAULT_RESTART: usize = 30;

/// The longest restart length [`Gmres::with_restart`] accepts: each basis vector is a whole
/// vector of storage, and the small least-squares system grows with its square.
const MAX_RESTART: usize = 1000;

/// Restarted GMRES(m) (Saad & Schultz, "GMRES: a generalized minimal residual algorithm for
/// solving nonsymmetric linear systems", SIAM J. Sci. Stat. Comput. 7, 1986) for non-symmetric
/// 5-point systems.
///
/// Each cycle builds an orthonormal basis of up to `m` Krylov vectors by **modified
/// Gram–Schmidt**, reduces the Hessenberg matrix to triangular form by **Givens rotations**
/// as it grows, and picks the iterate that minimises `‖b − A·x‖₂` over the cycle's Krylov
/// space; then it restarts from that iterate. Within a cycle the residual therefore never
/// grows, and with `m` at least the number of free cells it would end in at most that many
/// iterations in exact arithmetic.
///
/// **Which residual the rule sees.** The preconditioner is applied on the right
/// (`A·M⁻¹·u = b`, `x = x₀ + M⁻¹·V·y`), so the residual GMRES minimises, the monitor records
/// and the stop rule judges is the unpreconditioned `‖b − A·x‖₂` over the free cells, as for
/// every other driver. Inside a cycle the monitor sees the norm the rotations give (exact in
/// exact arithmetic) while `x` is not formed yet; `x` is formed at the end of each cycle, and
/// whenever the rule wants to stop, and the verdict is then taken again on the true residual
/// recomputed from `x`. A [`SolutionChange`](crate::stop::SolutionChange) rule sees a change
/// only at those points ([`Progress::solution_change`] is `None` inside a cycle).
///
/// **Cost.** Iteration `j` of a cycle costs one operator product, one preconditioner
/// application and `j + 2` passes over vectors with a dot product each (the Gram–Schmidt
/// projections fused with the updates); a cycle ends with one more preconditioner application
/// and one residual. Storage: `m + 4` vectors with the residual, plus `(m + 1)·m` numbers for
/// the Hessenberg matrix, kept in the driver. The iteration asks nothing of symmetry,
/// definiteness or the centers; a pure no-flow system is refused as singular
/// ([`ErrorKind::Singular`](crate::ErrorKind::Singular)).
///
/// **Breakdown.** A new Krylov vector that vanishes while the projected system is
/// non-singular means the iterate of that step solves the system ("lucky" breakdown): the solve
/// ends converged. If it vanishes with the projected system singular (the operator with its
/// preconditioner is singular on the directions searched), the solve ends with
/// [`ErrorKind::HessenbergSingular`](crate::ErrorKind::HessenbergSingular), the best iterate of
/// the cycle in `x` and the history in [`Error::report`].
///
/// # Example
///
/// ```
/// use quintet::prelude::*;
///
/// let grid = Grid::new(40, 40)?;
/// let flow = 2.0; // cell Péclet number of an upwinded flow towards the east
/// let op = Banded5::from_fn(grid, |i, j| {
///     let mut c = Coeffs5::laplacian(grid, i, j);
///     c.center += flow;
///     if i > 0 {
///         c.west -= flow;
///     }
///     c
/// })?;
/// let rhs = vec![1.0; grid.cells()];
/// let mut x = vec![0.0; grid.cells()];
/// let mut gmres = Gmres::new(Jacobi::new(&op)?).with_restart(40)?;
/// let report = gmres.solve(&op, &rhs, &mut x)?;
/// assert_eq!(report.method, "GMRES(40) + Jacobi");
/// assert!(report.relative_residual() <= 1e-8);
/// # Ok::<(), quintet::Error>(())
/// ```
#[derive(Clone, Debug)]
pub struct Gmres<P> {
    /// The preconditioner `M⁻¹`, applied on the right.
    pub preconditioner: P,
    /// Stopping rule (the residual refresh period does not apply: every cycle starts from a
    /// true residual).
    pub options: SolveOptions,
    small: Projected,
    name: NameCache,
}

/// The cycle's small dense problem, in `f64` whatever the scalar type: the Hessenberg matrix
/// (column `j` at `h[j·(m+1)..]`, triangular after the rotations), the Givens rotations and
/// the rotated right-hand side `g = Qᵀ·β·e₁`. Sized once, for the restart length.
#[derive(Clone, Debug)]
struct Projected {
    m: usize,
    h: Vec<f64>,
    cos: Vec<f64>,
    sin: Vec<f64>,
    g: Vec<f64>,
    y: Vec<f64>,
}

impl Projected {
    fn new(m: usize) -> Projected {
        Projected {
            m,
            h: vec![0.0; (m + 1) * m],
            cos: vec![0.0; m],
            sin: vec![0.0; m],
            g: vec![0.0; m + 1],
            y: vec![0.0; m],
        }
    }

    /// Solve the triangular system of the first `k` columns, `R·y = g`, into `y[..k]`.
    fn back_substitute(&mut self, k: usize) {
        let stride = self.m + 1;
        for i in (0..k).rev() {
            let mut acc = self.g[i];
            for c in i + 1..k {
                acc -= self.h[c * stride + i] * self.y[c];
            }
            self.y[i] = acc / self.h[i * stride + i];
        }
    }
}

impl<P> Gmres<P> {
    /// GMRES(30) with `preconditioner` ([`Identity`] for none) and default options.
    ///
    /// ```
    /// let gmres = quintet::Gmres::new(quintet::Identity);
    /// assert_eq!(gmres.restart_length(), 30);
    /// ```
    pub fn new(preconditioner: P) -> Gmres<P> {
        Gmres {
            preconditioner,
            options: SolveOptions::default(),
            small: Projected::new(DEFAULT_RESTART),
            name: NameCache::default(),
        }
    }

    /// The same driver restarting every `m` iterations (the Krylov basis holds `m` vectors).
    /// Larger `m` converges in fewer iterations on hard non-symmetric problems and costs `m`
    /// vectors of memory and longer Gram–Schmidt passes.
    ///
    /// # Errors
    ///
    /// [`ErrorKind::InvalidSetting`](crate::ErrorKind::InvalidSetting) unless
    /// `1 ≤ m ≤ 1000`.
    ///
    /// ```
    /// use quintet::prelude::*;
    /// assert_eq!(Gmres::default().with_restart(50)?.restart_length(), 50);
    /// assert_eq!(Gmres::default().with_restart(0).unwrap_err().kind(), ErrorKind::InvalidSetting);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn with_restart(mut self, m: usize) -> Result<Gmres<P>, Error> {
        if !(1..=MAX_RESTART).contains(&m) {
            return Err(Error::setting(
                "GMRES restart length m",
                m as f64,
                "it must be at least 1 and at most 1000 (each is a vector of storage; 20 to 100 is usual, 30 the default)",
            ));
        }
        self.small = Projected::new(m);
        self.name = NameCache::default();
        Ok(self)
    }

    /// The restart length `m`.
    ///
    /// ```
    /// assert_eq!(quintet::Gmres::default().restart_length(), 30);
    /// ```
    pub fn restart_length(&self) -> usize {
        self.small.m
    }

    /// The same driver with `options`.
    ///
    /// ```
    /// use quintet::prelude::*;
    /// let gmres = Gmres::default().with_options(SolveOptions::default().tolerance(1e-10));
    /// assert_eq!(gmres.options.tolerances.relative, 1e-10);
    /// ```
    pub fn with_options(mut self, options: SolveOptions) -> Gmres<P> {
        self.options = options;
        self
    }
}

/// GMRES(30) without a preconditioner.
///
/// ```
/// use quintet::prelude::*;
/// let grid = Grid::new(16, 16)?;
/// let op = Banded5::from_fn(grid, |i, j| Coeffs5::laplacian(grid, i, j))?;
/// let mut x = vec![0.0; grid.cells()];
/// let report = Gmres::default().solve(&op, &vec![1.0; grid.cells()], &mut x)?;
/// assert_eq!(report.method, "GMRES(30)");
/// # Ok::<(), quintet::Error>(())
/// ```
impl Default for Gmres<Identity> {
    fn default() -> Gmres<Identity> {
        Gmres::new(Identity)
    }
}

/// One GMRES iteration: one new basis vector and one column of the Hessenberg matrix.
/// Work vectors: the basis `v₀ … v_m`, then `z = M⁻¹·v_j` and the combination `V·y`.
struct GmresStep<'a, P: ?Sized, T> {
    pre: &'a mut P,
    identity: bool,
    small: &'a mut Projected,
    /// Whether a cycle is open (its basis started from the residual then in `r`).
    open: bool,
    /// Columns completed in the open cycle.
    columns: usize,
    /// The largest change of `x` when the iterate was last formed.
    change: Option<T>,
}

impl<T: Scalar, P: Preconditioner<T> + ?Sized> Method<T> for GmresStep<'_, P, T> {
    fn work_vectors(&self) -> usize {
        self.small.m + 3
    }

    fn requires(&self) -> Requires {
        Requires::DeterminedLevel
    }

    fn step(&mut self, cx: &mut Context<'_, T>, rr: T) -> Result<Step<T>, Breakdown<T>> {
        let m = self.small.m;
        let stride = m + 1;
        let (space, op) = (cx.space, cx.op);
        let (basis, rest) = cx.work.split_at_mut(m + 1);
        let [z, ..] = rest else {
            unreachable!("m + 3 work vectors were declared")
        };
        if !self.open {
            // A new cycle from the true residual now in r: v₀ = r/β, g = β·e₁.
            let beta = rr.sqrt();
            cx.blocks
                .scale_into(space, T::one() / beta, cx.r, &mut basis[0]);
            self.small.g.fill(0.0);
            self.small.g[0] = to_f64(beta);
            self.open = true;
            self.columns = 0;
        }
        let j = self.columns;
        let (done, next) = basis.split_at_mut(j + 1);
        let w = &mut next[0];
        let z: &[T] = if self.identity {
            &done[j][..]
        } else {
            self.pre.apply(op, space, &done[j], z);
            zero_fixed(op.fixed_cells(), &(0..op.len()), z);
            &z[..]
        };
        cx.blocks.apply_free(space, op, z, w);
        // Modified Gram–Schmidt, each projection fused with the update before it.
        let column = &mut self.small.h[j * stride..(j + 1) * stride];
        let mut h = cx.blocks.dot(space, w, &done[0]);
        for i in 0..j {
            column[i] = to_f64(h);
            h = cx.blocks.axpy_dot(space, -h, &done[i], w, &done[i + 1]);
        }
        column[j] = to_f64(h);
        let ww = cx.blocks.axpy_norm(space, -h, &done[j], w);
        let h_next = ww.sqrt();
        column[j + 1] = to_f64(h_next);
        if h_next > T::zero() {
            cx.blocks.scale(space, T::one() / h_next, w);
        }
        // Earlier rotations on the new column, then the one that zeroes its subdiagonal.
        let (cos, sin, g) = (&mut self.small.cos, &mut self.small.sin, &mut self.small.g);
        for i in 0..j {
            let (a, b) = (column[i], column[i + 1]);
            column[i] = cos[i] * a + sin[i] * b;
            column[i + 1] = -sin[i] * a + cos[i] * b;
        }
        let (a, b) = (column[j], column[j + 1]);
        let diagonal = a.hypot(b);
        if !(diagonal > 0.0 && diagonal.is_finite()) {
            return Err(Breakdown::Hessenberg(lit(diagonal)));
        }
        cos[j] = a / diagonal;
        sin[j] = b / diagonal;
        column[j] = diagonal;
        column[j + 1] = 0.0;
        g[j + 1] = -sin[j] * g[j];
        g[j] *= cos[j];
        self.columns = j + 1;
        let estimate: T = lit(g[j + 1] * g[j + 1]);
        if self.columns < m {
            return Ok(Step {
                rr: estimate,
                change: None,
                residual: Residual::Estimated,
            });
        }
        // The cycle is full: form x and restart from its true residual.
        self.form_iterate(cx);
        let rr = cx.blocks.residual_free(space, op, cx.rhs, cx.x, cx.r);
        Ok(Step {
            rr,
            change: self.change,
            residual: Residual::Recomputed,
        })
    }

    /// `x += M⁻¹·V·y` with `R·y = g` over the completed columns; closes the cycle.
    fn form_iterate(&mut self, cx: &mut Context<'_, T>) {
        let k = self.columns;
        let was_open = self.open;
        self.open = false;
        self.columns = 0;
        if !was_open || k == 0 {
            return;
        }
        let m = self.small.m;
        let (space, op) = (cx.space, cx.op);
        self.small.back_substitute(k);
        let (basis, rest) = cx.work.split_at_mut(m + 1);
        let [z, u, ..] = rest else {
            unreachable!("m + 3 work vectors were declared")
        };
        let y = &self.small.y;
        cx.blocks.scale_into(space, lit(y[0]), &basis[0], u);
        for i in 1..k {
            cx.blocks.axpy(space, lit(y[i]), &basis[i], u);
        }
        let correction: &[T] = if self.identity {
            &u[..]
        } else {
            self.pre.apply(op, space, u, z);
            zero_fixed(op.fixed_cells(), &(0..op.len()), z);
            &z[..]
        };
        self.change = Some(cx.blocks.add_largest(space, correction, cx.x));
    }

    fn restart(&mut self) {
        // The loop replaced the residual after forming the iterate, which closed the cycle.
        self.open = false;
        self.columns = 0;
    }
}

impl<T: Scalar, P: Preconditioner<T>> IterativeSolver<T> for Gmres<P> {
    fn solve_observed(
        &mut self,
        op: &dyn LinearOperator<T>,
        rhs: &[T],
        x: &mut [T],
        ws: &mut Workspace<T>,
        observer: &mut dyn FnMut(&Progress<'_>),
    ) -> Result<Report, Error> {
        self.preconditioner.check(op)?;
        let pre = &self.preconditioner;
        let m = self.small.m;
        let name = self.name.get(pre.name(), || {
            super::bicgstab::krylov_name(&format!("GMRES({m})"), pre)
        });
        let task = Task {
            op,
            rhs,
            x,
            ws,
            options: &self.options,
            observer,
        };
        let mut step = GmresStep {
            identity: self.preconditioner.is_identity(),
            pre: &mut self.preconditioner,
            small: &mut self.small,
            open: false,
            columns: 0,
            change: None,
        };
        run(&mut step, &name, task).map_err(|e| {
            if e.kind() == ErrorKind::HessenbergSingular {
                e.with_hint(GMRES_HINT)
            } else {
                e
            }
        })
    }

    fn options(&self) -> &SolveOptions {
        &self.options
    }

    fn options_mut(&mut self) -> &mut SolveOptions {
        &mut self.options
    }
}

/// What a GMRES breakdown suggests.
const GMRES_HINT: &str = "Check the operator for a region with no coupling to a fixed cell and no exchange (a zero row or a closed no-flow region) and the preconditioner for a zero or singular factor; GMRES needs a non-singular operator and preconditioner";
