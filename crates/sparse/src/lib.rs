//! # stoik-sparse
//!
//! LU factorization of square sparse matrices whose sparsity pattern is fixed, for the Newton
//! matrices `I - h gamma J` of stiff integrators: the pattern of the Jacobian `J` is known from
//! the stoichiometry, so everything that depends on the pattern alone is done once.
//!
//! - **Symbolic phase** ([`FixedPatternLu::new`], once per pattern): a fill-reducing symmetric
//!   ordering by approximate minimum degree on the pattern of `A + A^T` (Amestoy, Davis and
//!   Duff 1996; faer's implementation), the exact static pattern of `L + U` for elimination
//!   with diagonal pivots (reachability in the graph of `L`, Gilbert and Peierls 1988), a map
//!   from each stored entry of `A` to its position in the factor storage, and every work array.
//!   When the trailing part of the ordered matrix fills in nearly completely (hub species and
//!   their fill), its last `n_d` rows and columns become one dense block ("switch to dense",
//!   as in multifrontal and supernodal codes): `n_d` is chosen by a cost model of the numeric
//!   phase (sparse multiply-adds before the block plus `n_d^3 / 3` dense ones at their measured
//!   relative cost), at least 64, or 0 when not worth it
//!   ([`FixedPatternLu::dense_block_size`]).
//! - **Numeric phase** ([`FixedPatternLu::factorize`], every matrix update): left-looking LU on
//!   that pattern with diagonal pivots, no allocation. A pivot that is not finite or
//!   `|pivot| <= 1e-12 max |entry of its column|` ([`PIVOT_TOLERANCE`]) sends that one
//!   factorization to faer's sparse LU with partial pivoting, counted by
//!   [`FixedPatternLu::fallback_count`]. The columns of the dense block get their rows above
//!   the block (`U12`) by the same sparse triangular solve; their rows in the block, the Schur
//!   complement `B22 - L21 U12`, go to a preallocated column-major buffer factorized by faer's
//!   dense LU with partial pivoting (row exchanges inside the block only); a zero pivot there
//!   also sends the factorization to the fallback.
//! - **Solve** ([`FixedPatternLu::solve_in_place`], [`FixedPatternLu::solve_transpose_in_place`]):
//!   permutation and forward and back substitution in place (sparse part, then the dense
//!   block's permuted triangular solves, then sparse part), no allocation.
//!
//! Diagonal pivoting is safe for Newton matrices of kinetics: `I - h gamma J` tends to the
//! identity for small steps, and the diagonal of `J` holds the loss terms (negative), which make
//! the diagonal of `-h gamma J` positive; the fallback covers the rest.

#![warn(missing_docs)]

mod lu;
mod symbolic;

pub use lu::{FixedPatternLu, PIVOT_TOLERANCE};

/// Why a factorization or a solve could not be done.
#[derive(Debug, Clone, PartialEq, Eq, thiserror::Error)]
pub enum SparseLuError {
    /// The pattern is not a valid compressed-sparse-column pattern of an `n x n` matrix.
    #[error("malformed sparsity pattern: {0}")]
    BadPattern(String),
    /// A slice has the wrong length.
    #[error("{what} has {found} values, expected {expected}")]
    WrongLength {
        /// Which argument.
        what: &'static str,
        /// Expected length.
        expected: usize,
        /// Length given.
        found: usize,
    },
    /// The ordering or the fallback's symbolic analysis failed (index overflow, out of memory).
    #[error("symbolic analysis failed: {0}")]
    Ordering(String),
    /// The matrix is singular: diagonal pivoting failed and so did partial pivoting (found by
    /// the fallback's factorization, or by its solve producing non-finite values).
    #[error("the matrix is singular")]
    Singular,
    /// A solve was requested before a successful factorization.
    #[error("no factorization to solve with")]
    NotFactorized,
}
