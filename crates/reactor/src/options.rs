//! The settings of an integration: tolerances, linear algebra, step limits and watches, and
//! the solver's work counts.

use crate::{RunMonitor, Watch};
use stoik_kinetics::Kinetics;

/// Largest number of species for which [`LinearAlgebra::Auto`] picks dense linear algebra
/// regardless of fill. Set by the `dense_vs_sparse` benchmark (benches/README.md) with the
/// fixed-pattern sparse LU: on hub-structured synthetic mechanisms sparse/dense time is 1.05
/// at 25 species, 0.73 at 50, 0.45 at 100, 0.21 at 200 and 0.08 at 400, so the crossover lies
/// between 25 and 50 species.
pub const DENSE_MAX_SPECIES: usize = 40;

/// Jacobian fill fraction (stored entries / n^2) above which [`LinearAlgebra::Auto`] picks
/// dense linear algebra at any size: a sparse LU gains little on a matrix that full.
/// Provisional, like [`DENSE_MAX_SPECIES`].
pub const DENSE_MIN_FILL: f64 = 0.3;

/// Factor (dimensionless) by which the solver's own tolerances are tighter than the requested
/// ones: the BDF solver is handed `relative_tolerance / TOLERANCE_SAFETY_FACTOR` and each
/// absolute tolerance divided by it (the temperature's too). The local error estimate of a
/// BDF method is asymptotic (exact only as the step size goes to zero), and how local errors
/// add up to the global error depends on the problem, so the same requested tolerance gives
/// different global errors in different codes. stoik keeps its global error at or below that
/// of a reference BDF code (scipy's `solve_ivp` BDF) at the same requested tolerances: on the
/// published stiff problems of the fidelity suite (tests/scipy/fidelity.py, docs/fidelity.md)
/// a factor of 4 takes the points where stoik's error exceeded twice scipy BDF's from 18 to 2
/// of 300 reference times, at about 30 % more run time. A power of two, so that the requested
/// tolerance is recovered exactly from the solver's.
///
/// Everything reported to the user keeps the requested tolerances: summaries, failure
/// diagnoses and the conservation-drift allowance. Internal tests that compare against the
/// solver's error weights (the non-negativity guard, the projection onto conserved
/// combinations, the Newton convergence test) use the solver's tighter tolerances.
pub const TOLERANCE_SAFETY_FACTOR: f64 = 4.0;

/// Linear algebra for the Newton iterations of the BDF method.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum LinearAlgebra {
    /// Dense when the mechanism has at most [`DENSE_MAX_SPECIES`] species or its Jacobian
    /// pattern is fuller than [`DENSE_MIN_FILL`]; sparse otherwise.
    #[default]
    Auto,
    /// Dense matrices (nalgebra) and dense LU with partial pivoting.
    Dense,
    /// Compressed-sparse-column matrices on the kinetics' Jacobian pattern and stoik's own
    /// fixed-pattern sparse LU ([`stoik_sparse::FixedPatternLu`]): ordering and fill pattern
    /// computed once per solver, then per Newton matrix a numeric refactorization with
    /// diagonal pivots (falling back to faer's pivoting sparse LU for that one matrix when a
    /// pivot is tiny).
    Sparse,
    /// The same sparse matrices with faer's sparse LU (diffsol's `FaerSparseLU`: partial
    /// pivoting, which redoes its symbolic work at every numeric factorization). Only with
    /// the `bench-internals` feature, for the comparison benchmark; on hub-structured
    /// mechanisms it is much slower than [`LinearAlgebra::Sparse`] (benches/README.md,
    /// "Sparse LU: fixed-pattern refactorization vs faer").
    #[cfg(feature = "bench-internals")]
    SparseFaer,
}

impl LinearAlgebra {
    /// The concrete choice ([`LinearAlgebra::Dense`] or [`LinearAlgebra::Sparse`]) for
    /// `kinetics`; the other choices are returned unchanged.
    pub fn resolve(self, kinetics: &Kinetics) -> LinearAlgebra {
        match self {
            LinearAlgebra::Auto => {
                let n = kinetics.n_species();
                let fill = kinetics.jacobian_pattern().fill_fraction();
                if n <= DENSE_MAX_SPECIES || fill > DENSE_MIN_FILL {
                    LinearAlgebra::Dense
                } else {
                    LinearAlgebra::Sparse
                }
            }
            other => other,
        }
    }

    /// Whether this choice uses sparse matrices.
    pub(crate) fn is_sparse(self) -> bool {
        match self {
            LinearAlgebra::Sparse => true,
            #[cfg(feature = "bench-internals")]
            LinearAlgebra::SparseFaer => true,
            _ => false,
        }
    }
}

/// Settings of one integration.
#[derive(Debug, Clone, PartialEq)]
pub struct IntegrationOptions {
    /// Requested relative tolerance (dimensionless, > 0). The solver's local error test uses
    /// this value divided by [`TOLERANCE_SAFETY_FACTOR`].
    pub relative_tolerance: f64,
    /// Requested absolute tolerance of each species in mol/m3 (> 0), one per species in
    /// mechanism order; the solver's local error test uses these values divided by
    /// [`TOLERANCE_SAFETY_FACTOR`]. Set it well below the smallest concentration that matters.
    pub absolute_tolerances_mol_per_m3: Vec<f64>,
    /// Dense or sparse linear algebra (or automatic choice).
    pub linear_algebra: LinearAlgebra,
    /// Maximum number of accepted BDF steps per call ([`integrate`](crate::integrate) or
    /// [`BatchIntegrator::advance_to`](crate::BatchIntegrator::advance_to)); exceeding it is an [`IntegrationFailure`](crate::IntegrationFailure).
    pub max_steps: usize,
    /// Keep concentrations non-negative through the step acceptance (default `true`): a
    /// step whose solution falls below minus a species' absolute tolerance (the solver's:
    /// the requested one over [`TOLERANCE_SAFETY_FACTOR`]) is taken back, the last accepted
    /// state is projected onto c >= 0 (a change within that tolerance) and the step is
    /// retried at a quarter of its size, at most 10 times in a row. The right-hand side is
    /// never clipped, so the Jacobian stays exact. The projection can change element totals
    /// by at most the absolute tolerances.
    pub non_negative: bool,
    /// Quantities to locate on the solver's own steps during [`integrate`](crate::integrate) and
    /// [`simulate`](crate::simulate) (maxima and threshold crossings, refined on the solver's interpolant to
    /// the integration tolerance, independent of the output grid); the results are in
    /// [`Profiles::located`](crate::Profiles::located). Empty by default. Stepping sessions ignore them.
    pub watch: Vec<Watch>,
    /// Keep the mechanism's conserved combinations ([`Kinetics::conserved_combinations`]:
    /// element totals, moieties) on their initial values (default `true`): when round-off
    /// has moved one by more than a hundredth of the solver's error weights of its species
    /// (tolerances over [`TOLERANCE_SAFETY_FACTOR`]), the state
    /// is projected back (the smallest correction in the error-weighted norm) and the solver
    /// restarts from it. Applies to closed constant-volume reactors without box conditions.
    pub keep_invariants: bool,
    /// Convergence tolerance of the Newton iterations, in units of the solver's error weights
    /// `atol_i + rtol |y_i|` with the solver's tolerances (the requested ones over
    /// [`TOLERANCE_SAFETY_FACTOR`]) (dimensionless). `None` (the default) uses
    /// `max(10 eps / rtol, min(0.03, sqrt(rtol)))` with the solver's rtol, 5e-4 at a
    /// requested rtol of 1e-6 and 8.9e-5 at 1e-10 (factor 4),
    /// which keeps Newton errors well below the local error test. A looser value such as 0.2
    /// saves about 40 % of the right-hand-side evaluations at the price of larger global
    /// errors.
    pub newton_tolerance: Option<f64>,
    /// Longest wall-clock time (s, finite and positive) one call ([`integrate`](crate::integrate),
    /// [`simulate`](crate::simulate) or [`BatchIntegrator::advance_to`](crate::BatchIntegrator::advance_to))
    /// may take; checked after every accepted step. Running out ends the call like a solver
    /// failure: an [`IntegrationFailure`](crate::IntegrationFailure) of kind
    /// [`FailureKind::WallTimeLimit`](crate::FailureKind::WallTimeLimit) with the profile so
    /// far. `None` (the default): no limit.
    pub wall_time_limit_s: Option<f64>,
    /// A handle through which another thread follows the integration (time reached, steps)
    /// and can stop it ([`RunMonitor::interrupt`](crate::RunMonitor::interrupt)); see
    /// [`RunMonitor`](crate::RunMonitor). `None` (the default): none.
    pub monitor: Option<RunMonitor>,
}

impl IntegrationOptions {
    /// Defaults for `n_species` species: relative tolerance 1e-6, absolute tolerance 1e-12
    /// mol/m3 for every species, [`LinearAlgebra::Auto`], at most 100,000 steps per call,
    /// non-negativity enforced.
    pub fn new(n_species: usize) -> IntegrationOptions {
        IntegrationOptions {
            relative_tolerance: 1e-6,
            absolute_tolerances_mol_per_m3: vec![1e-12; n_species],
            linear_algebra: LinearAlgebra::Auto,
            max_steps: 100_000,
            non_negative: true,
            watch: Vec::new(),
            keep_invariants: true,
            newton_tolerance: None,
            wall_time_limit_s: None,
            monitor: None,
        }
    }
}

/// Work done by the solver (counts, dimensionless) and the positivity report.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct SolverStats {
    /// Accepted BDF steps.
    pub steps: usize,
    /// Right-hand-side evaluations `w(c)` (including those for the initial step size).
    pub rhs_evaluations: usize,
    /// Evaluations of the analytic Jacobian `dw/dc`.
    pub jacobian_evaluations: usize,
    /// Newton-matrix set-ups, each one numeric LU factorization of `I - h gamma J`.
    pub factorizations: usize,
    /// Steps rejected by the local error test.
    pub error_test_failures: usize,
    /// Newton iterations that failed to converge.
    pub nonlinear_failures: usize,
    /// Steps taken back and retried with a smaller step size because their solution went
    /// more negative than a species' absolute tolerance (non-negativity enforced in the step
    /// acceptance; the right-hand side itself is never clipped).
    pub negative_step_rejections: usize,
    /// Most negative concentration (mol/m3) seen in the state after any accepted step or at
    /// any output time; 0 if none went below zero.
    pub most_negative_concentration_mol_per_m3: f64,
    /// Times the state was projected back onto the conserved combinations (see
    /// [`IntegrationOptions::keep_invariants`]); each restarts the solver at first order.
    pub invariant_projections: usize,
}

/// The counts as one line for people and logs: `597 steps, 895 right-hand sides,
/// 12 Jacobians, 65 factorizations, 5 error-test failures, 0 nonlinear failures`.
impl std::fmt::Display for SolverStats {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(
            f,
            "{} steps, {} right-hand sides, {} Jacobians, {} factorizations, {} error-test failures, {} nonlinear failures",
            self.steps,
            self.rhs_evaluations,
            self.jacobian_evaluations,
            self.factorizations,
            self.error_test_failures,
            self.nonlinear_failures
        )
    }
}
