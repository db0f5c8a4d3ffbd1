//! Solutions of the fixed-pattern LU against nalgebra's dense LU with partial pivoting (an
//! independent solver) and faer's sparse LU with partial pivoting on seeded random matrices,
//! the pivoting fallback, fill and the dense trailing block on hub-structured patterns, and
//! the error paths.

mod common;

use common::{hub_newton_matrix, random_matrix, relative_difference, Csc, Rng};
use stoik_sparse::{FixedPatternLu, SparseLuError};

/// Factorizes `a` and checks `A x = b` and `A^T x = b` against dense LU to `tol` (relative,
/// max norm). Returns the factorization for further checks.
fn check_against_dense(a: &Csc, seed: u64, tol: f64) -> FixedPatternLu {
    let mut lu = FixedPatternLu::new(a.n, &a.column_starts, &a.row_indices).unwrap();
    lu.factorize(&a.values).unwrap();
    let mut rng = Rng::new(seed);
    let b: Vec<f64> = (0..a.n).map(|_| 2.0 * rng.uniform() - 1.0).collect();
    let dense = a.dense();
    let expected = dense
        .clone()
        .lu()
        .solve(&nalgebra::DVector::from_vec(b.clone()))
        .unwrap();
    let mut x = b.clone();
    lu.solve_in_place(&mut x).unwrap();
    let err = relative_difference(&x, expected.as_slice());
    assert!(err <= tol, "A x = b: relative difference {err:e} > {tol:e}");
    let expected_t = dense
        .transpose()
        .lu()
        .solve(&nalgebra::DVector::from_vec(b.clone()))
        .unwrap();
    let mut xt = b;
    lu.solve_transpose_in_place(&mut xt).unwrap();
    let err_t = relative_difference(&xt, expected_t.as_slice());
    assert!(
        err_t <= tol,
        "A^T x = b: relative difference {err_t:e} > {tol:e}"
    );
    lu
}

#[test]
fn diagonally_dominant_random_matrices_match_dense_lu() {
    // Strict diagonal dominance: elimination without pivoting is stable (Golub and Van Loan,
    // Matrix Computations, 4th ed., section 3.4.3), so no fallback may occur.
    for (seed, n, per_column) in [(1, 50, 3), (2, 200, 4), (3, 400, 6), (4, 1, 0)] {
        let a = random_matrix(n, per_column, true, seed);
        let lu = check_against_dense(&a, seed + 100, 1e-10);
        assert_eq!(lu.fallback_count(), 0, "seed {seed}");
        assert_eq!(lu.factorization_count(), 1);
        assert!(lu.nnz_lu() >= lu.nnz_a());
    }
}

#[test]
fn non_dominant_random_matrices_match_dense_lu() {
    // Diagonal as small as the off-diagonal entries: no stability guarantee; the answers must
    // still match the dense pivoting solver (the fallback takes over where needed).
    for (seed, n, per_column) in [(11, 40, 3), (12, 120, 3), (13, 300, 4)] {
        let a = random_matrix(n, per_column, false, seed);
        check_against_dense(&a, seed + 100, 1e-10);
    }
}

#[test]
fn random_matrices_with_heavy_fill_use_the_dense_block_and_match_dense_lu() {
    // Random patterns with 8 to 10 entries per column fill in almost completely under any
    // ordering, so most of the matrix becomes the dense block; with and without diagonal
    // dominance (the latter exercises the row exchanges inside the block) the answers must
    // match dense LU to 1e-10.
    for (seed, n, per_column, dominant) in [(111, 300, 8, true), (112, 400, 10, false)] {
        let a = random_matrix(n, per_column, dominant, seed);
        let lu = check_against_dense(&a, seed + 100, 1e-10);
        println!("random n = {n}: dense block {}", lu.dense_block_size());
        assert!(lu.dense_block_size() >= 64, "seed {seed}");
        assert_eq!(lu.fallback_count(), 0, "seed {seed}");
    }
}

#[test]
fn zero_diagonal_takes_the_fallback_and_still_solves() {
    // A = [[0, 2, 0], [1, 0, 0], [0, 3, 4]] with a stored zero on the diagonal: elimination
    // with diagonal pivots meets a zero pivot whatever the symmetric ordering (the first
    // pivot of any ordering of {0, 1} is a zero diagonal). Solution of A x = (2, 1, 11):
    // x = (1, 1, 2) by hand.
    let a = Csc::from_triplets(
        3,
        vec![
            (0, 0, 0.0),
            (1, 0, 1.0),
            (0, 1, 2.0),
            (1, 1, 0.0),
            (2, 1, 3.0),
            (2, 2, 4.0),
        ],
    );
    let mut lu = FixedPatternLu::new(3, &a.column_starts, &a.row_indices).unwrap();
    lu.factorize(&a.values).unwrap();
    assert_eq!(lu.fallback_count(), 1);
    assert!(lu.is_fallback_active());
    let mut x = vec![2.0, 1.0, 11.0];
    lu.solve_in_place(&mut x).unwrap();
    for (got, want) in x.iter().zip([1.0, 1.0, 2.0]) {
        assert!((got - want).abs() < 1e-14, "{x:?}");
    }
    // A^T x = (1, 8, 8) has x = (1, 1, 2) too (A^T = [[0, 1, 0], [2, 0, 3], [0, 0, 4]]).
    let mut xt = vec![1.0, 8.0, 8.0];
    lu.solve_transpose_in_place(&mut xt).unwrap();
    for (got, want) in xt.iter().zip([1.0, 1.0, 2.0]) {
        assert!((got - want).abs() < 1e-14, "{xt:?}");
    }
    // The next matrix of the same pattern with a good diagonal goes back to diagonal pivots:
    // A = [[1, 2, 0], [1, 5, 0], [0, 3, 4]], x = (1, 1, 2) for b = (3, 6, 11).
    let values = [1.0, 1.0, 2.0, 5.0, 3.0, 4.0];
    lu.factorize(&values).unwrap();
    assert_eq!(lu.fallback_count(), 1);
    assert!(!lu.is_fallback_active());
    let mut x = vec![3.0, 6.0, 11.0];
    lu.solve_in_place(&mut x).unwrap();
    for (got, want) in x.iter().zip([1.0, 1.0, 2.0]) {
        assert!((got - want).abs() < 1e-14, "{x:?}");
    }
}

#[test]
fn zeroed_diagonal_entry_in_larger_matrix_still_solves() {
    // A dominant random matrix with one diagonal entry set to zero: the pivot in that column
    // is then at most the round-off of the updates, and the answer must still match dense LU.
    let mut a = random_matrix(150, 4, true, 21);
    let j = 77;
    let p = (a.column_starts[j]..a.column_starts[j + 1])
        .find(|&p| a.row_indices[p] == j)
        .unwrap();
    a.values[p] = 0.0;
    let lu = check_against_dense(&a, 22, 1e-10);
    // Whether the zero survives depends on the updates it receives from earlier columns; the
    // count is 0 or 1, and the result is right either way (checked above).
    assert!(lu.fallback_count() <= 1);
}

/// Normwise backward error `|A x - b|_inf / (|A|_inf |x|_inf + |b|_inf)` (Higham, Accuracy and
/// Stability of Numerical Algorithms, 2nd ed., Theorem 7.1 and eq. 7.2 for the infinity norm).
fn backward_error(a: &Csc, x: &[f64], b: &[f64]) -> f64 {
    let mut r: Vec<f64> = b.iter().map(|v| -v).collect();
    let mut row_abs = vec![0.0; a.n];
    for (j, &xj) in x.iter().enumerate() {
        for p in a.column_starts[j]..a.column_starts[j + 1] {
            r[a.row_indices[p]] += a.values[p] * xj;
            row_abs[a.row_indices[p]] += a.values[p].abs();
        }
    }
    let inf = |v: &[f64]| v.iter().fold(0.0f64, |m, e| m.max(e.abs()));
    inf(&r) / (inf(&row_abs) * inf(x) + inf(b))
}

#[test]
fn hub_mechanism_pattern_factors_with_modest_fill() {
    // The Newton matrix I - h J of a 1,000-species hub mechanism. A dense LU would store
    // n^2 = 1e6 entries; the fixed-pattern factors must stay sparse (under 10 % of that) and
    // agree with dense LU at a moderate step (h = 1e-2 s).
    let n = 1000;
    let a = hub_newton_matrix(n, 1e-2, 31);
    let lu = check_against_dense(&a, 32, 1e-10);
    let fill_ratio = lu.nnz_lu() as f64 / lu.nnz_a() as f64;
    println!(
        "hub pattern n = {n}: nnz(A) = {}, nnz(L+U) = {}, ratio {fill_ratio:.2}, fallbacks {}",
        lu.nnz_a(),
        lu.nnz_lu(),
        lu.fallback_count()
    );
    assert!(lu.nnz_lu() >= lu.nnz_a());
    assert!(lu.nnz_lu() < n * n / 10, "nnz(L+U) = {}", lu.nnz_lu());
    // The permutation is a permutation.
    let mut seen = vec![false; n];
    for &p in lu.permutation() {
        assert!(!seen[p]);
        seen[p] = true;
    }
}

#[test]
fn hub_mechanism_at_large_step_is_backward_stable() {
    // At h = 1e3 s the Jacobian (rate constants up to 1e6 /s) dominates and the matrix is
    // ill-conditioned (about 1e9), so two different LUs need not agree to 1e-10 in the
    // solution; both must be backward stable: backward error of order the unit round-off
    // (Higham, Theorem 9.3, with modest growth). Bound 1e-13, against dense LU's own.
    let n = 1000;
    let a = hub_newton_matrix(n, 1e3, 31);
    let mut lu = FixedPatternLu::new(n, &a.column_starts, &a.row_indices).unwrap();
    lu.factorize(&a.values).unwrap();
    let b: Vec<f64> = (0..n).map(|i| 1.0 + (i as f64).cos()).collect();
    let mut x = b.clone();
    lu.solve_in_place(&mut x).unwrap();
    let ours = backward_error(&a, &x, &b);
    let dense = a
        .dense()
        .lu()
        .solve(&nalgebra::DVector::from_vec(b.clone()))
        .unwrap();
    let theirs = backward_error(&a, dense.as_slice(), &b);
    println!("backward error: fixed-pattern {ours:e}, dense {theirs:e}");
    assert!(ours <= 1e-13, "{ours:e}");
    assert!(theirs <= 1e-13, "{theirs:e}");
}

#[test]
fn refactorization_with_new_values_matches_dense_lu() {
    // Same pattern, values scaled by different step sizes: every refactorization must be
    // right on its own (no state carried over from the previous values).
    let n = 300;
    let first = hub_newton_matrix(n, 1e-3, 41);
    let mut lu = FixedPatternLu::new(n, &first.column_starts, &first.row_indices).unwrap();
    for (k, h) in [1e-3, 1e2, 1e-6, 1e4].into_iter().enumerate() {
        let a = hub_newton_matrix(n, h, 41);
        assert!(lu.has_pattern(&a.column_starts, &a.row_indices));
        lu.factorize(&a.values).unwrap();
        let b: Vec<f64> = (0..n).map(|i| (i as f64).sin()).collect();
        let expected = a
            .dense()
            .lu()
            .solve(&nalgebra::DVector::from_vec(b.clone()))
            .unwrap();
        let mut x = b;
        lu.solve_in_place(&mut x).unwrap();
        let err = relative_difference(&x, expected.as_slice());
        assert!(err <= 1e-10, "h = {h}: {err:e}");
        assert_eq!(lu.factorization_count(), k + 1);
    }
}

#[test]
fn bad_input_gives_typed_errors() {
    // Unsorted rows in a column.
    let err = FixedPatternLu::new(2, &[0, 2, 3], &[1, 0, 1]).unwrap_err();
    assert!(matches!(err, SparseLuError::BadPattern(_)), "{err}");
    // Row out of range.
    let err = FixedPatternLu::new(2, &[0, 1, 2], &[0, 2]).unwrap_err();
    assert!(matches!(err, SparseLuError::BadPattern(_)), "{err}");
    // Wrong number of column starts.
    let err = FixedPatternLu::new(2, &[0, 1], &[0]).unwrap_err();
    assert!(matches!(err, SparseLuError::BadPattern(_)), "{err}");
    let mut lu = FixedPatternLu::new(2, &[0, 1, 2], &[0, 1]).unwrap();
    let mut x = vec![1.0, 1.0];
    assert_eq!(lu.solve_in_place(&mut x), Err(SparseLuError::NotFactorized));
    assert_eq!(
        lu.factorize(&[1.0]),
        Err(SparseLuError::WrongLength {
            what: "matrix values",
            expected: 2,
            found: 1
        })
    );
    // A singular matrix (zero column): diagonal pivoting rejects it, and the pivoting
    // fallback's solve reports it.
    lu.factorize(&[1.0, 0.0]).unwrap();
    assert_eq!(lu.fallback_count(), 1);
    assert_eq!(lu.solve_in_place(&mut x), Err(SparseLuError::Singular));
    x = vec![1.0, 1.0];
    lu.factorize(&[2.0, 4.0]).unwrap();
    let mut short = vec![1.0];
    assert!(matches!(
        lu.solve_in_place(&mut short),
        Err(SparseLuError::WrongLength { .. })
    ));
    // diag(2, 4) x = (1, 1): x = (0.5, 0.25).
    lu.solve_in_place(&mut x).unwrap();
    assert_eq!(x, vec![0.5, 0.25]);
}

/// Solves `A x = b` and `A^T x = b` with faer's sparse LU with partial pivoting (an
/// independent sparse solver).
fn faer_solutions(a: &Csc, b: &[f64]) -> (Vec<f64>, Vec<f64>) {
    use faer::linalg::solvers::Solve;
    let triplets: Vec<faer::sparse::Triplet<usize, usize, f64>> = (0..a.n)
        .flat_map(|j| {
            (a.column_starts[j]..a.column_starts[j + 1])
                .map(move |p| faer::sparse::Triplet::new(a.row_indices[p], j, a.values[p]))
        })
        .collect();
    let m = faer::sparse::SparseColMat::<usize, f64>::try_new_from_triplets(a.n, a.n, &triplets)
        .unwrap();
    let lu = m.sp_lu().unwrap();
    let mut x = faer::Mat::<f64>::from_fn(a.n, 1, |i, _| b[i]);
    lu.solve_in_place(x.as_mut());
    let mut xt = faer::Mat::<f64>::from_fn(a.n, 1, |i, _| b[i]);
    lu.solve_transpose_in_place(xt.as_mut());
    (
        (0..a.n).map(|i| x[(i, 0)]).collect(),
        (0..a.n).map(|i| xt[(i, 0)]).collect(),
    )
}

/// Solves `A x = b` and `A^T x = b` with `lu` (already factorized).
fn our_solutions(lu: &FixedPatternLu, b: &[f64]) -> (Vec<f64>, Vec<f64>) {
    let mut x = b.to_vec();
    lu.solve_in_place(&mut x).unwrap();
    let mut xt = b.to_vec();
    lu.solve_transpose_in_place(&mut xt).unwrap();
    (x, xt)
}

#[test]
fn hub_mechanism_at_1000_uses_the_dense_block_and_matches_dense_lu() {
    // On the 1,000-species hub pattern the ordered matrix ends in a trailing block of about
    // 200 rows that is some 70 % full once filled; the cost model must pick a dense block
    // (at least the 64 minimum) and the solutions of A x = b and A^T x = b must match dense
    // LU with partial pivoting to 1e-10, and the purely sparse factorization too.
    let n = 1000;
    let a = hub_newton_matrix(n, 1e-1, 51);
    let lu = check_against_dense(&a, 52, 1e-10);
    let n_d = lu.dense_block_size();
    println!("n = {n}: dense block {n_d}, nnz(L+U) {}", lu.nnz_lu());
    assert!((64..n / 2).contains(&n_d), "dense block {n_d}");
    assert_eq!(lu.fallback_count(), 0);
    let mut sparse_only =
        FixedPatternLu::with_dense_block(n, &a.column_starts, &a.row_indices, false).unwrap();
    assert_eq!(sparse_only.dense_block_size(), 0);
    sparse_only.factorize(&a.values).unwrap();
    let b: Vec<f64> = (0..n).map(|i| 0.5 + (i as f64 * 0.37).sin()).collect();
    let (x, xt) = our_solutions(&lu, &b);
    let (y, yt) = our_solutions(&sparse_only, &b);
    assert!(relative_difference(&x, &y) <= 1e-10);
    assert!(relative_difference(&xt, &yt) <= 1e-10);
    // The same permutation either way: the block changes the factorization, not the ordering.
    assert_eq!(lu.permutation(), sparse_only.permutation());
}

#[test]
fn hub_mechanism_at_3000_with_dense_block_matches_faer_sparse_lu() {
    // 3,000 species: a dense block of several hundred rows. faer's sparse LU with partial
    // pivoting is the independent reference (a dense LU of order 3,000 is too slow for a
    // test); agreement to 1e-9 relative for A x = b and A^T x = b, at two step sizes on the
    // same factorization object (refactorization reuses the block).
    let n = 3000;
    for (k, h) in [1e-1, 1e1].into_iter().enumerate() {
        let a = hub_newton_matrix(n, h, 61);
        let mut lu = FixedPatternLu::new(n, &a.column_starts, &a.row_indices).unwrap();
        lu.factorize(&a.values).unwrap();
        let n_d = lu.dense_block_size();
        println!(
            "n = {n}, h = {h}: dense block {n_d}, nnz(L+U) {}",
            lu.nnz_lu()
        );
        assert!((200..n / 2).contains(&n_d), "dense block {n_d}");
        assert_eq!(lu.fallback_count(), 0);
        let mut rng = Rng::new(62 + k as u64);
        let b: Vec<f64> = (0..n).map(|_| 2.0 * rng.uniform() - 1.0).collect();
        let (x, xt) = our_solutions(&lu, &b);
        let (y, yt) = faer_solutions(&a, &b);
        let (err, err_t) = (relative_difference(&x, &y), relative_difference(&xt, &yt));
        assert!(err <= 1e-9, "h = {h}: A x = b differs by {err:e}");
        assert!(err_t <= 1e-9, "h = {h}: A^T x = b differs by {err_t:e}");
    }
}

/// Position of entry `(i, j)` in the values of `a`.
fn entry(a: &Csc, i: usize, j: usize) -> usize {
    (a.column_starts[j]..a.column_starts[j + 1])
        .find(|&p| a.row_indices[p] == i)
        .unwrap()
}

#[test]
fn zero_diagonal_inside_the_dense_block_is_handled_by_its_partial_pivoting() {
    // Zero the diagonal entries of A for the last 20 columns of the ordering (all in the
    // dense block). Diagonal pivoting would meet pivots made of update round-off or zero; the
    // dense block pivots by rows instead, so no fallback is needed, and the answers must
    // match dense LU with partial pivoting to 1e-10.
    let n = 1000;
    let mut a = hub_newton_matrix(n, 1e-1, 71);
    let lu = FixedPatternLu::new(n, &a.column_starts, &a.row_indices).unwrap();
    assert!(lu.dense_block_size() >= 64);
    for &old in &lu.permutation()[n - 20..] {
        let p = entry(&a, old, old);
        a.values[p] = 0.0;
    }
    let lu = check_against_dense(&a, 72, 1e-10);
    assert_eq!(lu.fallback_count(), 0);
    assert!(!lu.is_fallback_active());
}

#[test]
fn zero_pivot_before_the_dense_block_takes_the_fallback() {
    // A column of the ordering before the dense block whose stored entries all lie on rows
    // ordered at or after it receives no updates (left-looking elimination only updates a
    // column through its entries above the diagonal, and those come from stored entries above
    // it), so a zero diagonal there is an exact zero pivot of the sparse part: that
    // factorization must go to the pivoting fallback and still match dense LU (A x = b and
    // A^T x = b) to 1e-10. The column and the row chosen have off-diagonal entries, so the
    // matrix stays nonsingular (checked by the dense LU succeeding).
    let n = 1000;
    let mut a = hub_newton_matrix(n, 1e-1, 81);
    let lu = FixedPatternLu::new(n, &a.column_starts, &a.row_indices).unwrap();
    let n_d = lu.dense_block_size();
    assert!(n_d >= 64);
    let perm = lu.permutation().to_vec();
    let mut position = vec![0; n];
    for (k, &old) in perm.iter().enumerate() {
        position[old] = k;
    }
    let mut row_has_off_diagonal = vec![false; n];
    for j in 0..n {
        for &i in &a.row_indices[a.column_starts[j]..a.column_starts[j + 1]] {
            if i != j {
                row_has_off_diagonal[i] = true;
            }
        }
    }
    let k = (0..n - n_d)
        .find(|&k| {
            let old = perm[k];
            let rows = &a.row_indices[a.column_starts[old]..a.column_starts[old + 1]];
            rows.len() > 1 && row_has_off_diagonal[old] && rows.iter().all(|&i| position[i] >= k)
        })
        .unwrap();
    let old = perm[k];
    let p = entry(&a, old, old);
    a.values[p] = 0.0;
    let lu = check_against_dense(&a, 82, 1e-10);
    assert_eq!(lu.fallback_count(), 1);
    assert!(lu.is_fallback_active());
}

#[test]
fn singular_dense_block_is_reported_by_the_solve() {
    // Zero every entry of the column ordered last (inside the dense block): the matrix has a
    // zero column (rank at most n - 1), the Schur complement column is zero, the dense LU
    // meets a zero pivot, the fallback takes over and its solve reports the matrix singular.
    let n = 1000;
    let mut a = hub_newton_matrix(n, 1e-1, 91);
    let mut lu = FixedPatternLu::new(n, &a.column_starts, &a.row_indices).unwrap();
    let old = lu.permutation()[n - 1];
    for p in a.column_starts[old]..a.column_starts[old + 1] {
        a.values[p] = 0.0;
    }
    lu.factorize(&a.values).unwrap();
    assert_eq!(lu.fallback_count(), 1);
    let mut x = vec![1.0; n];
    assert_eq!(lu.solve_in_place(&mut x), Err(SparseLuError::Singular));
}

#[test]
fn a_factorization_sharing_the_symbolic_analysis_solves_other_values_of_the_pattern() {
    // Two Newton matrices of one hub pattern (different step sizes): the second factorization
    // reuses the first's ordering and fill pattern and must match dense LU (nalgebra, partial
    // pivoting) to 1e-10, like an independent analysis would.
    let a = hub_newton_matrix(600, 1e-3, 7);
    let b_matrix = hub_newton_matrix(600, 1e2, 7);
    assert_eq!(a.row_indices, b_matrix.row_indices, "same pattern");
    let first = check_against_dense(&a, 5, 1e-10);
    let mut shared = first.share_symbolic().unwrap();
    assert_eq!(shared.permutation(), first.permutation());
    assert_eq!(shared.nnz_lu(), first.nnz_lu());
    shared.factorize(&b_matrix.values).unwrap();
    let rhs: Vec<f64> = (0..600).map(|i| ((i * 7919) % 13) as f64 - 6.0).collect();
    let expected = b_matrix
        .dense()
        .lu()
        .solve(&nalgebra::DVector::from_vec(rhs.clone()))
        .unwrap();
    let mut x = rhs;
    shared.solve_in_place(&mut x).unwrap();
    let err = relative_difference(&x, expected.as_slice());
    assert!(err <= 1e-10, "relative difference {err:e}");
}

#[test]
fn block_solves_match_dense_lu_column_by_column() {
    // Several right-hand sides at once (row-major block) against nalgebra's dense LU on each
    // column: diagonally dominant random matrices (no fallback), hub-structured Newton
    // matrices (with a dense trailing block) and non-dominant ones (the fallback path).
    let cases = [
        (random_matrix(60, 3, true, 31), 1e-10),
        (hub_newton_matrix(1000, 1e-3, 32), 1e-9),
        (random_matrix(80, 3, false, 33), 1e-8),
    ];
    for (case, (a, tol)) in cases.iter().enumerate() {
        let mut lu = FixedPatternLu::new(a.n, &a.column_starts, &a.row_indices).unwrap();
        lu.factorize(&a.values).unwrap();
        let ncols = 7;
        let mut rng = Rng::new(40 + case as u64);
        let b: Vec<f64> = (0..a.n * ncols)
            .map(|_| 2.0 * rng.uniform() - 1.0)
            .collect();
        let mut x = b.clone();
        lu.solve_rows_in_place(&mut x, ncols).unwrap();
        let dense = a.dense().lu();
        for c in 0..ncols {
            let column: Vec<f64> = (0..a.n).map(|i| b[i * ncols + c]).collect();
            let expected = dense.solve(&nalgebra::DVector::from_vec(column)).unwrap();
            let got: Vec<f64> = (0..a.n).map(|i| x[i * ncols + c]).collect();
            let err = relative_difference(&got, expected.as_slice());
            assert!(err <= *tol, "case {case}, column {c}: {err:e} > {tol:e}");
        }
    }
    let a = random_matrix(10, 2, true, 5);
    let lu = FixedPatternLu::new(a.n, &a.column_starts, &a.row_indices).unwrap();
    let mut x = vec![0.0; 10 * 3];
    assert!(matches!(
        lu.solve_rows_in_place(&mut x, 3),
        Err(SparseLuError::NotFactorized)
    ));
    assert!(matches!(
        lu.solve_rows_in_place(&mut x[..29], 3),
        Err(SparseLuError::WrongLength { .. })
    ));
}
