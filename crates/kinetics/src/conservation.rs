//! Conservation laws of a mechanism: a basis of the left null space of its net
//! stoichiometric matrix.
//!
//! With `N` the net stoichiometric matrix (species x steps, `N_ij = nu''_ij - nu'_ij`), a
//! closed constant-volume reactor obeys `dc/dt = N q(c)` whatever the rates `q`, so every
//! vector `l` with `l^T N = 0` gives an invariant `l^T c` (common practice; e.g. Schuster &
//! Hoefer, J. Chem. Soc. Faraday Trans. 87, 2561, 1991, cited from memory).
//!
//! The laws are computed exactly. Stoichiometric coefficients and atom counts are read as
//! fractions (`0.62` is 31/50). The rank and a null-space basis come from a sparse
//! elimination modulo a 62-bit prime (no coefficient growth, species in few steps pivoted
//! first), lifted to integers by rational reconstruction and verified against every step in
//! checked 128-bit integer arithmetic; a verified basis proves the rank. Readable candidates
//! (element totals, moieties) are tested in exact integer arithmetic too. A mechanism whose
//! laws would need coefficients beyond that reach gives [`ConservationError::TooLarge`].
//!
//! The basis is chosen to be readable, in this order of preference:
//! 1. element totals ("H atoms": atom counts of the element), for every element that the
//!    steps balance (every element of a balanced mechanism);
//! 2. semi-positive moieties of smallest support ("A + B + C"): the extreme rays of the cone
//!    `{l >= 0 : l^T N = 0}`, found with the double-description method (skipped, with
//!    nothing lost but readability, when the cone is too large to enumerate within a fixed
//!    budget);
//! 3. the remaining directions from the exact null-space basis, with integer coefficients
//!    whose first nonzero one is positive ("Y2 - Y3 - Y4").
//!
//! A law that is a combination of laws already chosen is not repeated (with N2O4 <=> 2 NO2
//! alone, the O total is twice the N total and only the element listed first in the
//! mechanism is reported). The number of laws is always `n_species - rank(N)`.
//!
//! Species that something outside the steps changes or holds (box-model emissions,
//! deposition and fixed species) are passed as `open_species`: each adds a column `e_i` to
//! `N`, so no law involves them.

use stoik_mechanism::Mechanism;

/// Largest denominator accepted when a coefficient is read as a fraction: decimals with up
/// to six decimal places and fractions such as 1/3 written to full f64 precision. (Larger
/// bounds start to accept accidents: 245850922/78256779 is the f64 nearest pi.)
const MAX_DENOMINATOR: i128 = 1_000_000;

/// Limit on the number of extreme rays kept by the double-description method.
const MAX_RAYS: usize = 2_000;

/// Limit on the support comparisons of the double-description method (its work).
const MAX_ADJACENCY_WORK: u64 = 200_000_000;

/// Where a conservation law comes from.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum LawKind {
    /// The total of an element (index into [`Mechanism::elements`]): coefficients are the
    /// species' atom counts, the law's value is in mol of atoms per m3.
    Element(usize),
    /// A moiety: a combination of species with integer coefficients (gcd 1, first nonzero
    /// one positive) that no step changes.
    Moiety,
}

/// One conservation law `sum_i l_i c_i = constant` of a mechanism.
#[derive(Debug, Clone, PartialEq)]
pub struct ConservationLaw {
    /// Readable name: `"H atoms"` for an element total, the combination itself for a moiety
    /// (`"A + B + C"`, `"2 X + Y"`, `"Y2 - Y3 - Y4"`).
    pub name: String,
    /// Element total or moiety.
    pub kind: LawKind,
    /// `l_i`, one per species in mechanism order (dimensionless: atoms per molecule for an
    /// element, small integers for a moiety). `l^T N = 0` holds exactly.
    pub coefficients: Vec<f64>,
}

impl ConservationLaw {
    /// The law's value `sum_i l_i c_i` for concentrations `c` (mol/m3, one per species), in
    /// mol/m3 (of atoms for an element total); compensated summation, so that the value
    /// carries no more rounding than its terms.
    pub fn value(&self, concentrations_mol_per_m3: &[f64]) -> f64 {
        compensated_sum(
            self.coefficients
                .iter()
                .zip(concentrations_mol_per_m3)
                .filter(|(l, _)| **l != 0.0)
                .map(|(l, c)| l * c),
        )
    }

    /// The species with a nonzero coefficient, as (species index, `l_i`).
    pub fn terms(&self) -> impl Iterator<Item = (usize, f64)> + '_ {
        self.coefficients
            .iter()
            .enumerate()
            .filter(|(_, l)| **l != 0.0)
            .map(|(i, l)| (i, *l))
    }
}

/// `sum_i a_i` (in the unit of the terms) with Neumaier's compensated summation (A. Neumaier,
/// Z. Angew. Math. Mech. 54, 1974): accurate to about machine epsilon times the sum.
pub fn compensated_sum(values: impl Iterator<Item = f64>) -> f64 {
    let (mut sum, mut compensation) = (0.0f64, 0.0f64);
    for v in values {
        let t = sum + v;
        if sum.abs() >= v.abs() {
            compensation += (sum - t) + v;
        } else {
            compensation += (v - t) + sum;
        }
        sum = t;
    }
    sum + compensation
}

/// Why the conservation laws could not be computed exactly.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum ConservationError {
    /// A stoichiometric coefficient or atom count is not a fraction with a denominator up to
    /// 1e6 (the exact elimination needs rational numbers).
    #[error("{what} {value} is not a fraction with a denominator up to 1e6; conservation laws need exact coefficients")]
    NotAFraction {
        /// Which number (e.g. "coefficient of `O2` in step 3").
        what: String,
        /// The value.
        value: f64,
    },
    /// Some conservation law needs coefficients beyond the exact arithmetic (numerators and
    /// denominators up to about 1e9 in the null-space basis, 128-bit integers elsewhere).
    #[error("the conservation laws of this mechanism need coefficients too large for the exact arithmetic")]
    TooLarge,
    /// An open species index is out of range.
    #[error("open species index {0} is out of range")]
    SpeciesOutOfRange(usize),
}

/// Overflow of the exact arithmetic.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
struct Overflow;

impl From<Overflow> for ConservationError {
    fn from(_: Overflow) -> Self {
        ConservationError::TooLarge
    }
}

/// A sparse integer vector: (index, value) pairs, indices increasing, values nonzero.
type Row = Vec<(usize, i128)>;

fn gcd(a: i128, b: i128) -> i128 {
    let (mut a, mut b) = (a.unsigned_abs(), b.unsigned_abs());
    while b != 0 {
        (a, b) = (b, a % b);
    }
    // At most |i128::MIN|, which only arises from inputs we never build (|values| < 2^126).
    i128::try_from(a).unwrap_or(i128::MAX)
}

/// `x` as the fraction p/q (q > 0) whose f64 quotient is exactly `x`, with the smallest
/// denominator (a continued-fraction convergent; by Legendre's theorem every fraction that
/// close with q <= 1e6 is one); `None` when there is none with q <= [`MAX_DENOMINATOR`].
fn to_fraction(x: f64) -> Option<(i128, i128)> {
    if !x.is_finite() {
        return None;
    }
    if x.fract() == 0.0 && x.abs() < 1e15 {
        return Some((x as i128, 1));
    }
    let sign = if x < 0.0 { -1 } else { 1 };
    let y = x.abs();
    if y >= 1e15 {
        return None;
    }
    let (mut p0, mut q0, mut p1, mut q1) = (0i128, 1i128, 1i128, 0i128);
    let mut r = y;
    for _ in 0..64 {
        let a = r.floor();
        if a > 1e15 {
            return None;
        }
        let a = a as i128;
        let p2 = a.checked_mul(p1)?.checked_add(p0)?;
        let q2 = a.checked_mul(q1)?.checked_add(q0)?;
        if q2 > MAX_DENOMINATOR {
            return None;
        }
        if p2 as f64 / q2 as f64 == y {
            return Some((sign * p2, q2));
        }
        (p0, q0, p1, q1) = (p1, q1, p2, q2);
        let frac = r - r.floor();
        if frac == 0.0 {
            return None;
        }
        r = 1.0 / frac;
    }
    None
}

/// Integer multiple (gcd of entries 1) of a sparse vector of fractions (sorted, unique indices).
fn integer_row(entries: &[(usize, i128, i128)]) -> Result<Row, Overflow> {
    let mut lcm: i128 = 1;
    for &(_, _, q) in entries {
        let g = gcd(lcm, q);
        lcm = (lcm / g).checked_mul(q).ok_or(Overflow)?;
    }
    let mut row: Row = Vec::with_capacity(entries.len());
    for &(i, p, q) in entries {
        if p != 0 {
            row.push((i, p.checked_mul(lcm / q).ok_or(Overflow)?));
        }
    }
    normalize(&mut row);
    Ok(row)
}

/// Divides a row by the gcd of its entries.
fn normalize(row: &mut Row) {
    let g = row.iter().fold(0, |g, &(_, v)| gcd(g, v));
    if g > 1 {
        row.iter_mut().for_each(|(_, v)| *v /= g);
    }
}

/// `ca * a + cb * b`, zeros dropped.
fn combine(a: &Row, ca: i128, b: &Row, cb: i128) -> Result<Row, Overflow> {
    let mut out = Vec::with_capacity(a.len() + b.len());
    let (mut i, mut j) = (0, 0);
    while i < a.len() || j < b.len() {
        let (col, v) = match (a.get(i), b.get(j)) {
            (Some(&(ca_col, va)), Some(&(cb_col, vb))) if ca_col == cb_col => {
                i += 1;
                j += 1;
                let x = ca.checked_mul(va).ok_or(Overflow)?;
                let y = cb.checked_mul(vb).ok_or(Overflow)?;
                (ca_col, x.checked_add(y).ok_or(Overflow)?)
            }
            (Some(&(ca_col, va)), Some(&(cb_col, _))) if ca_col < cb_col => {
                i += 1;
                (ca_col, ca.checked_mul(va).ok_or(Overflow)?)
            }
            (Some(&(ca_col, va)), None) => {
                i += 1;
                (ca_col, ca.checked_mul(va).ok_or(Overflow)?)
            }
            (_, Some(&(cb_col, vb))) => {
                j += 1;
                (cb_col, cb.checked_mul(vb).ok_or(Overflow)?)
            }
            (None, None) => break,
        };
        if v != 0 {
            out.push((col, v));
        }
    }
    Ok(out)
}

/// Dot product of two sparse rows.
fn dot(a: &Row, b: &Row) -> Result<i128, Overflow> {
    let (mut i, mut j, mut sum) = (0, 0, 0i128);
    while i < a.len() && j < b.len() {
        match a[i].0.cmp(&b[j].0) {
            std::cmp::Ordering::Less => i += 1,
            std::cmp::Ordering::Greater => j += 1,
            std::cmp::Ordering::Equal => {
                let p = a[i].1.checked_mul(b[j].1).ok_or(Overflow)?;
                sum = sum.checked_add(p).ok_or(Overflow)?;
                i += 1;
                j += 1;
            }
        }
    }
    Ok(sum)
}

/// Rows in echelon form (distinct leading columns), built one row at a time.
struct Echelon {
    rows: Vec<Row>,
    /// Per column: the row whose leading entry is there.
    pivot_row: Vec<Option<usize>>,
}

impl Echelon {
    fn new(n_columns: usize) -> Self {
        Echelon {
            rows: Vec::new(),
            pivot_row: vec![None; n_columns],
        }
    }

    /// Adds `row` when it is independent of the rows so far; returns whether it was.
    fn insert(&mut self, mut row: Row) -> Result<bool, Overflow> {
        while let Some(&(lead, v)) = row.first() {
            match self.pivot_row[lead] {
                Some(p) => {
                    let pivot = &self.rows[p];
                    let pv = pivot[0].1;
                    let g = gcd(pv, v);
                    row = combine(&row, pv / g, pivot, -(v / g))?;
                    normalize(&mut row);
                }
                None => {
                    self.pivot_row[lead] = Some(self.rows.len());
                    self.rows.push(row);
                    return Ok(true);
                }
            }
        }
        Ok(false)
    }
}

/// Primes below 2^62 for the modular elimination (2^62 - 57, - 87, - 117; checked with a
/// deterministic Miller-Rabin test): sums of two residues fit in u64, products in u128.
const PRIMES: [u64; 3] = [
    4_611_686_018_427_387_847,
    4_611_686_018_427_387_817,
    4_611_686_018_427_387_787,
];

fn mul_mod(a: u64, b: u64, p: u64) -> u64 {
    ((a as u128 * b as u128) % p as u128) as u64
}

fn pow_mod(mut a: u64, mut e: u64, p: u64) -> u64 {
    let mut r = 1;
    while e > 0 {
        if e & 1 == 1 {
            r = mul_mod(r, a, p);
        }
        a = mul_mod(a, a, p);
        e >>= 1;
    }
    r
}

fn to_mod(v: i128, p: u64) -> u64 {
    v.rem_euclid(p as i128) as u64
}

/// A sparse vector of residues modulo a prime (indices increasing, values nonzero).
type ModRow = Vec<(usize, u64)>;

/// `a + c b` modulo `p`, zeros dropped.
fn axpy_mod(a: &ModRow, c: u64, b: &ModRow, p: u64) -> ModRow {
    let mut out = Vec::with_capacity(a.len() + b.len());
    let (mut i, mut j) = (0, 0);
    while i < a.len() || j < b.len() {
        let take_a = j >= b.len() || (i < a.len() && a[i].0 <= b[j].0);
        let take_b = i >= a.len() || (j < b.len() && b[j].0 <= a[i].0);
        let (col, mut v) = if take_a {
            (a[i].0, a[i].1)
        } else {
            (b[j].0, 0)
        };
        if take_a {
            i += 1;
        }
        if take_b {
            v = (v + mul_mod(c, b[j].1, p)) % p;
            j += 1;
        }
        if v != 0 {
            out.push((col, v));
        }
    }
    out
}

/// Rows modulo a prime in echelon form with monic leading entries: the rank and a null
/// space without coefficient growth (exact integer elimination can outgrow any fixed width
/// on large mechanisms).
struct ModEchelon {
    p: u64,
    rows: Vec<ModRow>,
    pivot_row: Vec<Option<usize>>,
}

impl ModEchelon {
    fn new(n_columns: usize, p: u64) -> Self {
        ModEchelon {
            p,
            rows: Vec::new(),
            pivot_row: vec![None; n_columns],
        }
    }

    fn insert(&mut self, row: &Row) {
        let p = self.p;
        let mut r: ModRow = row
            .iter()
            .map(|&(i, v)| (i, to_mod(v, p)))
            .filter(|&(_, v)| v != 0)
            .collect();
        while let Some(&(lead, v)) = r.first() {
            match self.pivot_row[lead] {
                Some(k) => r = axpy_mod(&r, p - v, &self.rows[k], p),
                None => {
                    let inv = pow_mod(v, p - 2, p);
                    r.iter_mut().for_each(|(_, x)| *x = mul_mod(*x, inv, p));
                    self.pivot_row[lead] = Some(self.rows.len());
                    self.rows.push(r);
                    return;
                }
            }
        }
    }

    /// A basis of the null space modulo p: per column without a pivot, the vector with 1
    /// there, 0 at the other such columns, by back substitution.
    fn null_space(&self) -> Vec<ModRow> {
        let p = self.p;
        let n = self.pivot_row.len();
        let mut by_lead: Vec<&ModRow> = self.rows.iter().collect();
        by_lead.sort_by_key(|r| std::cmp::Reverse(r[0].0));
        let mut basis = Vec::new();
        for free in (0..n).filter(|&c| self.pivot_row[c].is_none()) {
            let mut l = vec![0u64; n];
            l[free] = 1;
            for row in &by_lead {
                let s = row[1..]
                    .iter()
                    .fold(0u64, |s, &(c, a)| (s + mul_mod(a, l[c], p)) % p);
                l[row[0].0] = (p - s) % p;
            }
            basis.push(
                l.iter()
                    .enumerate()
                    .filter(|(_, x)| **x != 0)
                    .map(|(i, x)| (i, *x))
                    .collect(),
            );
        }
        basis
    }
}

/// The fraction r/s (|r|, s <= sqrt(p/2), s > 0) congruent to `x` modulo `p`, if any
/// (rational reconstruction by the half-extended Euclidean algorithm, common practice in
/// computer algebra).
fn reconstruct(x: u64, p: u64) -> Option<(i128, i128)> {
    let bound = ((p / 2) as f64).sqrt() as i128;
    let (mut r0, mut r1) = (p as i128, x as i128);
    let (mut s0, mut s1) = (0i128, 1i128);
    while r1 > bound {
        let q = r0 / r1;
        (r0, r1) = (r1, r0 - q * r1);
        (s0, s1) = (s1, s0 - q * s1);
    }
    if s1 == 0 || s1.abs() > bound {
        return None;
    }
    let (r, s) = if s1 < 0 { (-r1, -s1) } else { (r1, s1) };
    (gcd(r, s) == 1).then_some((r, s))
}

/// An integer vector (gcd 1) proportional to the rational vector whose residues modulo `p`
/// are `v`, when its entries have small enough numerators and denominators.
fn lift(v: &ModRow, p: u64) -> Option<Row> {
    let mut denominator: i128 = 1;
    let mut out: Row = Vec::with_capacity(v.len());
    for &(i, a) in v {
        let (r, s) = reconstruct(mul_mod(a, to_mod(denominator, p), p), p)?;
        if s != 1 {
            for (_, x) in out.iter_mut() {
                *x = x.checked_mul(s)?;
            }
            denominator = denominator.checked_mul(s)?;
        }
        out.push((i, r));
    }
    normalize(&mut out);
    Some(out)
}

/// A ray of the double-description method: a semi-positive vector and its support.
struct Ray {
    l: Row,
    support: Vec<u64>,
}

fn support_of(l: &Row, words: usize) -> Vec<u64> {
    let mut s = vec![0u64; words];
    for &(i, _) in l {
        s[i / 64] |= 1 << (i % 64);
    }
    s
}

/// The extreme rays of `{l >= 0 : c . l = 0 for every constraint c}` over the species not
/// in `closed_out` (double description: start from the unit vectors, intersect with one
/// constraint at a time, combining adjacent pairs of opposite sign), or `None` when the work
/// exceeds the budget.
fn semi_positive_rays(
    n: usize,
    constraints: &[Row],
    closed_out: &[bool],
) -> Result<Option<Vec<Row>>, Overflow> {
    let words = n.div_ceil(64);
    let mut rays: Vec<Ray> = (0..n)
        .filter(|&i| !closed_out[i])
        .map(|i| {
            let l = vec![(i, 1i128)];
            Ray {
                support: support_of(&l, words),
                l,
            }
        })
        .collect();
    // Constraints with few sign pairs first keep the intermediate cones small.
    let mut order: Vec<&Row> = constraints.iter().collect();
    order.sort_by_key(|c| {
        let pos = c.iter().filter(|(_, v)| *v > 0).count();
        let neg = c.len() - pos;
        pos * neg
    });
    let mut work: u64 = 0;
    for constraint in order {
        if rays.is_empty() {
            break;
        }
        let mut residual = Vec::with_capacity(rays.len());
        for ray in &rays {
            residual.push(dot(&ray.l, constraint)?);
        }
        if residual.iter().all(|&r| r == 0) {
            continue;
        }
        let positive: Vec<usize> = (0..rays.len()).filter(|&k| residual[k] > 0).collect();
        let negative: Vec<usize> = (0..rays.len()).filter(|&k| residual[k] < 0).collect();
        let mut next: Vec<Ray> = Vec::new();
        for &p in &positive {
            for &m in &negative {
                let union: Vec<u64> = rays[p]
                    .support
                    .iter()
                    .zip(&rays[m].support)
                    .map(|(a, b)| a | b)
                    .collect();
                work += (rays.len() * words) as u64;
                if work > MAX_ADJACENCY_WORK {
                    return Ok(None);
                }
                let adjacent = rays.iter().enumerate().all(|(k, q)| {
                    k == p || k == m || q.support.iter().zip(&union).any(|(s, u)| s & !u != 0)
                });
                if !adjacent {
                    continue;
                }
                let mut l = combine(&rays[p].l, -residual[m], &rays[m].l, residual[p])?;
                normalize(&mut l);
                next.push(Ray {
                    support: support_of(&l, words),
                    l,
                });
                if next.len() > MAX_RAYS {
                    return Ok(None);
                }
            }
        }
        for (k, ray) in rays.into_iter().enumerate() {
            if residual[k] == 0 {
                next.push(ray);
            }
        }
        if next.len() > MAX_RAYS {
            return Ok(None);
        }
        rays = next;
    }
    Ok(Some(rays.into_iter().map(|r| r.l).collect()))
}

/// The name of a moiety: `"A + 2 B - C"`.
fn moiety_name(mechanism: &Mechanism, l: &Row) -> String {
    let mut name = String::new();
    for (k, &(i, v)) in l.iter().enumerate() {
        let species = mechanism.species.get(i).map_or("?", |s| s.name.as_str());
        let sign = match (k, v < 0) {
            (0, false) => "",
            (0, true) => "-",
            (_, false) => " + ",
            (_, true) => " - ",
        };
        name.push_str(sign);
        if v.abs() != 1 {
            name.push_str(&format!("{} ", v.abs()));
        }
        name.push_str(species);
    }
    name
}

/// A basis of the left null space of the net stoichiometric matrix whose step rows (integer,
/// over `n` species) are `steps`, with the species flagged in `open` excluded: computed
/// modulo a prime, lifted to integers and verified exactly against every row.
fn exact_null_space(
    n: usize,
    steps: &[Row],
    open: &[bool],
) -> Result<Vec<Option<Row>>, ConservationError> {
    // The elimination runs on permuted columns: species in few steps first, so that pivots
    // fall on them and the species in many steps (radical pools, hubs) fill in last.
    let mut count = vec![0usize; n];
    for row in steps {
        for &(i, _) in row {
            count[i] += 1;
        }
    }
    let mut species_at: Vec<usize> = (0..n).collect();
    species_at.sort_by_key(|&i| (count[i], i));
    let mut position_of = vec![0usize; n];
    for (p, &i) in species_at.iter().enumerate() {
        position_of[i] = p;
    }
    let permute = |row: &Row, map: &[usize]| -> Row {
        let mut out: Row = row.iter().map(|&(i, v)| (map[i], v)).collect();
        out.sort_unstable_by_key(|&(i, _)| i);
        out
    };
    let in_null_space = |l: &Row| -> bool {
        !l.iter().any(|&(i, _)| open[i])
            && steps.iter().all(|row| dot(l, row).is_ok_and(|d| d == 0))
    };
    // Rank and null space modulo a prime, lifted to integers and verified exactly: lifted
    // vectors that all verify prove the rank (rank mod p never exceeds the rank over the
    // rationals, and the lifted vectors are independent).
    let mut found = None;
    for &prime in &PRIMES {
        let mut echelon = ModEchelon::new(n, prime);
        for (i, _) in open.iter().enumerate().filter(|(_, o)| **o) {
            echelon.insert(&vec![(position_of[i], 1)]);
        }
        for row in steps {
            echelon.insert(&permute(row, &position_of));
        }
        let lifted: Vec<Option<Row>> = echelon
            .null_space()
            .iter()
            .map(|v| lift(v, prime).map(|l| permute(&l, &species_at)))
            .collect();
        if lifted.iter().flatten().all(&in_null_space) {
            found = Some(lifted);
            break;
        }
    }
    found.ok_or(ConservationError::TooLarge)
}

/// A basis of the conserved combinations of a compiled mechanism from its net
/// stoichiometry (`steps`: one list of (species, net coefficient) per step): coefficient
/// vectors over `n` species, exact integers. Empty when the coefficients are not fractions
/// that this module can handle exactly. Used by integrators to keep the invariants; no names
/// or readability preferences (see [`conservation_laws`] for those).
pub(crate) fn conserved_basis<'a>(
    n: usize,
    steps: impl Iterator<Item = &'a [(usize, f64)]>,
) -> Vec<Vec<f64>> {
    let mut rows: Vec<Row> = Vec::new();
    for net in steps {
        let mut sorted: Vec<(usize, f64)> = net.to_vec();
        sorted.sort_by_key(|&(s, _)| s);
        let Some(fractions) = sorted
            .iter()
            .map(|&(s, nu)| to_fraction(nu).map(|(p, q)| (s, p, q)))
            .collect::<Option<Vec<_>>>()
        else {
            return Vec::new();
        };
        let Ok(mut row) = integer_row(&fractions) else {
            return Vec::new();
        };
        if row.first().is_some_and(|&(_, v)| v < 0) {
            row.iter_mut().for_each(|(_, v)| *v = -*v);
        }
        if !row.is_empty() && !rows.contains(&row) {
            rows.push(row);
        }
    }
    let open = vec![false; n];
    exact_null_space(n, &rows, &open)
        .map(|basis| {
            basis
                .iter()
                .flatten()
                .map(|l| {
                    let mut dense = vec![0.0; n];
                    for &(i, v) in l {
                        dense[i] = v as f64;
                    }
                    dense
                })
                .collect()
        })
        .unwrap_or_default()
}

/// The conservation laws of `mechanism` (a basis of the left null space of its net
/// stoichiometric matrix, see the module documentation), with the species `open_species`
/// exchanged with the surroundings or held fixed (no law involves them).
///
/// Third bodies do not enter (a collider is not changed by its step). The result has
/// `n_species - rank([N, e_open])` laws; every law satisfies `l^T N = 0` exactly.
pub fn conservation_laws(
    mechanism: &Mechanism,
    open_species: &[usize],
) -> Result<Vec<ConservationLaw>, ConservationError> {
    let n = mechanism.species.len();
    let mut open = vec![false; n];
    for &i in open_species {
        *open
            .get_mut(i)
            .ok_or(ConservationError::SpeciesOutOfRange(i))? = true;
    }
    let name = |i: usize| mechanism.species.get(i).map_or("?", |s| s.name.as_str());

    // The rows of N^T (one per step, integer, gcd 1, duplicates and opposite steps once).
    let mut steps: Vec<Row> = Vec::new();
    for (j, step) in mechanism.steps.iter().enumerate() {
        let mut net: Vec<(usize, f64)> = Vec::new();
        let terms = step
            .products
            .iter()
            .map(|t| (t.species, t.coefficient))
            .chain(step.reactants.iter().map(|t| (t.species, -t.coefficient)));
        for (s, nu) in terms {
            match net.iter_mut().find(|(t, _)| *t == s) {
                Some(entry) => entry.1 += nu,
                None => net.push((s, nu)),
            }
        }
        net.sort_by_key(|&(s, _)| s);
        let mut fractions = Vec::with_capacity(net.len());
        for (s, nu) in net {
            let (p, q) = to_fraction(nu).ok_or_else(|| ConservationError::NotAFraction {
                what: format!("net coefficient of `{}` in step {}", name(s), j + 1),
                value: nu,
            })?;
            fractions.push((s, p, q));
        }
        let mut row = integer_row(&fractions)?;
        if row.first().is_some_and(|&(_, v)| v < 0) {
            row.iter_mut().for_each(|(_, v)| *v = -*v);
        }
        if !row.is_empty() && !steps.contains(&row) {
            steps.push(row);
        }
    }

    let in_null_space = |l: &Row| -> bool {
        !l.iter().any(|&(i, _)| open[i])
            && steps.iter().all(|row| dot(l, row).is_ok_and(|d| d == 0))
    };
    let lifted = exact_null_space(n, &steps, &open);
    let lifted = lifted?;
    let nullity = lifted.len();
    let mut laws = Vec::with_capacity(nullity);
    if nullity == 0 {
        return Ok(laws);
    }
    let mut chosen = Echelon::new(n);

    // 1. Element totals.
    for (e, element) in mechanism.elements.iter().enumerate() {
        let mut fractions = Vec::new();
        let mut counts = vec![0.0; n];
        for (i, species) in mechanism.species.iter().enumerate() {
            let count: f64 = species
                .composition
                .iter()
                .flatten()
                .filter(|(el, _)| *el == e)
                .map(|(_, c)| c)
                .sum();
            if count != 0.0 {
                let (p, q) = to_fraction(count).ok_or_else(|| ConservationError::NotAFraction {
                    what: format!("number of {} atoms in `{}`", element.symbol, name(i)),
                    value: count,
                })?;
                fractions.push((i, p, q));
                counts[i] = count;
            }
        }
        let l = integer_row(&fractions)?;
        if !l.is_empty() && in_null_space(&l) && chosen.insert(l)? {
            laws.push(ConservationLaw {
                name: format!("{} atoms", element.symbol),
                kind: LawKind::Element(e),
                coefficients: counts,
            });
        }
    }

    // 2. Semi-positive moieties of smallest support, 3. the exact null-space basis.
    let mut candidates: Vec<Row> = Vec::new();
    if laws.len() < nullity {
        // Overflow in the enumeration only costs readability: skip it.
        if let Ok(Some(mut rays)) = semi_positive_rays(n, &steps, &open) {
            rays.sort_by_key(|l| (l.len(), l.iter().map(|&(_, v)| v).sum::<i128>(), l.clone()));
            candidates.extend(rays);
        }
        for mut l in lifted.into_iter().flatten() {
            if l.first().is_some_and(|&(_, v)| v < 0) {
                l.iter_mut().for_each(|(_, v)| *v = -*v);
            }
            candidates.push(l);
        }
    }
    for l in candidates {
        if laws.len() == nullity {
            break;
        }
        if chosen.insert(l.clone())? {
            let mut coefficients = vec![0.0; n];
            for &(i, v) in &l {
                coefficients[i] = v as f64;
            }
            laws.push(ConservationLaw {
                name: moiety_name(mechanism, &l),
                kind: LawKind::Moiety,
                coefficients,
            });
        }
    }
    // Short only when some null-space vector could not be lifted and no readable law
    // replaced it.
    if laws.len() < nullity {
        return Err(ConservationError::TooLarge);
    }
    Ok(laws)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn fractions_are_the_written_decimals() {
        assert_eq!(to_fraction(0.62), Some((31, 50)));
        assert_eq!(to_fraction(-1.5), Some((-3, 2)));
        assert_eq!(to_fraction(1.0 / 3.0), Some((1, 3)));
        assert_eq!(to_fraction(0.333), Some((333, 1000)));
        assert_eq!(to_fraction(2.0), Some((2, 1)));
        assert_eq!(to_fraction(0.123456), Some((1929, 15625)));
        assert_eq!(to_fraction(std::f64::consts::PI), None);
        assert_eq!(to_fraction(0.1234567), None);
    }

    #[test]
    fn null_space_of_a_small_integer_matrix() {
        // Rows (1, 2, 0) and (0, 3, 6): null space spanned by (4, -2, 1) (by hand:
        // x2 = -2 x3, x1 = -2 x2 = 4 x3); the third row is 2 (1, 2, 0) + (0, 3, 6).
        let rows: [Row; 3] = [
            vec![(0, 1), (1, 2)],
            vec![(1, 3), (2, 6)],
            vec![(0, 2), (1, 7), (2, 6)],
        ];
        let mut exact = Echelon::new(3);
        let independent: Vec<bool> = rows
            .iter()
            .map(|r| exact.insert(r.clone()).unwrap())
            .collect();
        assert_eq!(independent, [true, true, false]);
        for p in PRIMES {
            let mut e = ModEchelon::new(3, p);
            rows.iter().for_each(|r| e.insert(r));
            let basis = e.null_space();
            assert_eq!(basis.len(), 1);
            assert_eq!(lift(&basis[0], p), Some(vec![(0, 4), (1, -2), (2, 1)]));
        }
    }

    #[test]
    fn rational_reconstruction_recovers_small_fractions() {
        let p = PRIMES[0];
        for (r, s) in [
            (3i128, 7i128),
            (-5, 2),
            (-999_999_937, 1_000_000_007),
            (0, 1),
        ] {
            let x = mul_mod(to_mod(r, p), pow_mod(to_mod(s, p), p - 2, p), p);
            assert_eq!(reconstruct(x, p), Some((r, s)));
        }
    }
}
