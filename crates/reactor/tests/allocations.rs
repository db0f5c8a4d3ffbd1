//! Steady-state stepping does not allocate: after a warm-up, rounds of
//! `advance_to` + `set_state` + `set_temperature` on one [`BatchIntegrator`] make zero heap
//! allocations, on the dense and on the sparse path; so do rounds of a stirred tank with
//! user terms whose inlet, residence time and user parameters change between advances.
//!
//! A counting global allocator (this test binary only) counts allocation calls (`alloc`,
//! `alloc_zeroed`, `realloc`) made on the current thread while counting is switched on, so
//! other test threads do not disturb the count.

mod common;

use std::alloc::{GlobalAlloc, Layout, System};
use std::cell::Cell;

use common::*;
use stoik_kinetics::Kinetics;
use stoik_mechanism::{Arrhenius, Step};
use stoik_reactor::{
    BatchIntegrator, BatchSystem, LinearAlgebra, ReactorModel, StirredFlow, UserJacobian, UserTerms,
};

struct CountingAllocator;

thread_local! {
    static COUNTING: Cell<bool> = const { Cell::new(false) };
    static ALLOCATIONS: Cell<usize> = const { Cell::new(0) };
}

fn note_allocation() {
    // `try_with`: thread-locals may be gone while a thread shuts down.
    let counting = COUNTING.try_with(Cell::get).unwrap_or(false);
    if counting {
        let _ = ALLOCATIONS.try_with(|a| a.set(a.get() + 1));
    }
}

unsafe impl GlobalAlloc for CountingAllocator {
    unsafe fn alloc(&self, layout: Layout) -> *mut u8 {
        note_allocation();
        unsafe { System.alloc(layout) }
    }
    unsafe fn alloc_zeroed(&self, layout: Layout) -> *mut u8 {
        note_allocation();
        unsafe { System.alloc_zeroed(layout) }
    }
    unsafe fn realloc(&self, ptr: *mut u8, layout: Layout, new_size: usize) -> *mut u8 {
        note_allocation();
        unsafe { System.realloc(ptr, layout, new_size) }
    }
    unsafe fn dealloc(&self, ptr: *mut u8, layout: Layout) {
        unsafe { System.dealloc(ptr, layout) }
    }
}

#[global_allocator]
static GLOBAL: CountingAllocator = CountingAllocator;

/// Allocations made on this thread by `f`.
fn allocations_in<R>(f: impl FnOnce() -> R) -> (R, usize) {
    ALLOCATIONS.with(|a| a.set(0));
    COUNTING.with(|c| c.set(true));
    let result = f();
    COUNTING.with(|c| c.set(false));
    (result, ALLOCATIONS.with(Cell::get))
}

const N: usize = 40;
const FEED: f64 = 0.05;

/// A chain S0 -> S1 -> ... -> S(N-1) with Arrhenius steps (Ea = 40 kJ/mol, so the rate
/// constants change with temperature) plus the nonlinear step S0 + S0 -> S0 + S1. Every step
/// turns one molecule into one molecule, so the total concentration is invariant.
fn chain() -> Kinetics {
    let names: Vec<String> = (0..N).map(|i| format!("S{i}")).collect();
    let names: Vec<&str> = names.iter().map(String::as_str).collect();
    let warm = |pre: f64| Arrhenius {
        pre_exponential_si: pre,
        temperature_exponent: 0.0,
        activation_energy_j_per_mol: 40_000.0,
    };
    let mut steps: Vec<Step> = (0..N - 1)
        .map(|i| arrhenius_step(&[(i, 1.0)], &[(i + 1, 1.0)], warm(1e7 * (1.0 + i as f64))))
        .collect();
    steps.push(step(&[(0, 2.0)], &[(0, 1.0), (1, 1.0)], 3.0));
    kinetics(&names, steps)
}

/// One round of operator splitting: advance by 0.5 s, add FEED of S0, switch temperature.
fn round(stepper: &mut BatchIntegrator<'_>, k: usize, scratch: &mut [f64; N]) {
    let t = stepper.time() + 0.5;
    let now = stepper.advance_to(t).unwrap();
    scratch.copy_from_slice(now);
    scratch[0] += FEED;
    stepper.set_state(scratch).unwrap();
    let temperature = if k.is_multiple_of(2) { 320.0 } else { 300.0 };
    stepper.set_temperature(temperature).unwrap();
}

#[test]
fn the_counter_counts() {
    // One vector with capacity is one allocation; pushing past the capacity reallocates.
    let (v, n) = allocations_in(|| {
        let mut v = std::hint::black_box(Vec::<f64>::with_capacity(2));
        v.extend_from_slice(&[1.0, 2.0, 3.0]);
        v
    });
    assert_eq!(v.len(), 3);
    assert_eq!(n, 2);
}

#[test]
fn steady_stepping_allocates_nothing() {
    let kin = chain();
    for la in [LinearAlgebra::Dense, LinearAlgebra::Sparse] {
        let mut system = BatchSystem::new(&kin, 300.0, &options(N, 1e-7, 1e-12, la)).unwrap();
        let mut c0 = [0.0; N];
        c0[0] = 1.0;
        let (stepper, opening) = allocations_in(|| system.integrator(&c0).unwrap());
        let mut stepper = stepper;
        // Opening a session builds a solver: that allocates.
        assert!(opening > 0, "{la:?}: opening counted {opening} allocations");
        assert_eq!(stepper.linear_algebra_used(), la);
        let mut scratch = [0.0; N];
        // Warm-up. The session's first step allocates the Newton solver's two work vectors
        // (diffsol creates them lazily); later rounds must not allocate at all.
        let (_, first_round) = allocations_in(|| round(&mut stepper, 0, &mut scratch));
        let (_, warm_up) = allocations_in(|| {
            for k in 1..20 {
                round(&mut stepper, k, &mut scratch);
            }
        });
        println!(
            "{la:?}: opening {opening}, first round {first_round}, next 19 rounds {warm_up} \
             allocations"
        );
        let steps_before = stepper.stats().steps;

        // Each piece on its own, then whole rounds.
        let (_, advance) = allocations_in(|| {
            let t = stepper.time() + 0.5;
            stepper.advance_to(t).map(|c| c[0]).unwrap()
        });
        scratch.copy_from_slice(stepper.state());
        scratch[0] += FEED;
        let (_, set_state) = allocations_in(|| stepper.set_state(&scratch).unwrap());
        let (_, set_temperature) = allocations_in(|| stepper.set_temperature(310.0).unwrap());
        let rounds = 100;
        let (_, in_rounds) = allocations_in(|| {
            for k in 0..rounds {
                round(&mut stepper, k, &mut scratch);
            }
        });
        let stats = *stepper.stats();
        println!(
            "{la:?}: advance_to {advance}, set_state {set_state}, set_temperature \
             {set_temperature} allocations; {rounds} rounds ({} steps) {in_rounds} \
             allocations; session totals {stats:?}",
            stats.steps - steps_before,
        );
        assert_eq!(advance, 0, "{la:?}: allocations in advance_to");
        assert_eq!(set_state, 0, "{la:?}: allocations in set_state");
        assert_eq!(set_temperature, 0, "{la:?}: allocations in set_temperature");
        assert_eq!(in_rounds, 0, "{la:?}: allocations in {rounds} rounds");
        assert!(stats.steps - steps_before > rounds, "{stats:?}");

        // The work was real: every step conserves the number of molecules, so the total is
        // the initial 1 mol/m3 plus the feeds (conservation of mass; common practice).
        let feeds = 20 + 1 + rounds;
        let total: f64 = stepper.state().iter().sum();
        assert_close(
            &format!("{la:?}: total concentration"),
            total,
            1.0 + FEED * feeds as f64,
            1e-6,
            0.0,
        );
    }
}

/// A user transfer of every species to the one two places on (entries the chain's pattern
/// does not have): `S_i -= r c_i`, `S_{i+2} += r c_i`.
struct Skip {
    rate_per_s: f64,
}

impl UserTerms for Skip {
    fn jacobian_entries(&self, n: usize) -> Vec<(usize, usize)> {
        (0..n - 2).flat_map(|i| [(i, i), (i + 2, i)]).collect()
    }
    fn add_rates(&mut self, _t: f64, c: &[f64], _temp: f64, rates: &mut [f64], _q: &mut f64) {
        for i in 0..c.len() - 2 {
            rates[i] -= self.rate_per_s * c[i];
            rates[i + 2] += self.rate_per_s * c[i];
        }
    }
    fn add_jacobian(&mut self, _t: f64, c: &[f64], _temp: f64, jac: &mut UserJacobian<'_>) {
        for i in 0..c.len() - 2 {
            jac.add(i, i, -self.rate_per_s);
            jac.add(i + 2, i, self.rate_per_s);
        }
    }
}

/// One round of a stirred tank with user terms: advance by 0.5 s, switch the inlet between
/// two compositions, set the residence time to the value in force, change the user's rate
/// and restart.
fn tank_round(stepper: &mut BatchIntegrator<'_>, k: usize, inlets: &[[f64; N]; 2]) {
    let t = stepper.time() + 0.5;
    stepper.advance_to(t).unwrap();
    stepper.set_inlet_mol_per_m3(&inlets[k % 2]).unwrap();
    stepper.set_residence_time_s(2.0).unwrap();
    if let Some(mut skip) = stepper.user_terms_mut::<Skip>() {
        skip.rate_per_s = if k.is_multiple_of(2) { 0.5 } else { 0.25 };
    }
    stepper.restart();
}

#[test]
fn user_terms_and_box_changes_allocate_nothing() {
    let kin = chain();
    let mut inlets = [[0.0; N]; 2];
    inlets[0][0] = 1.0;
    inlets[1][1] = 0.5;
    let model = ReactorModel {
        flow: Some(StirredFlow::new(2.0, inlets[0].to_vec(), 300.0).unwrap()),
        ..Default::default()
    };
    for la in [LinearAlgebra::Dense, LinearAlgebra::Sparse] {
        let mut system =
            BatchSystem::with_model(&kin, &model, 300.0, &options(N, 1e-7, 1e-12, la)).unwrap();
        system.set_user_terms(Skip { rate_per_s: 0.5 }).unwrap();
        let mut stepper = system.integrator(&[0.0; N]).unwrap();
        assert_eq!(stepper.linear_algebra_used(), la);
        for k in 0..20 {
            tank_round(&mut stepper, k, &inlets);
        }
        let steps_before = stepper.stats().steps;
        let rounds = 100;
        let (_, in_rounds) = allocations_in(|| {
            for k in 0..rounds {
                tank_round(&mut stepper, k, &inlets);
            }
        });
        let steps = stepper.stats().steps - steps_before;
        println!("{la:?}: {rounds} rounds ({steps} steps) {in_rounds} allocations");
        assert_eq!(in_rounds, 0, "{la:?}: allocations in {rounds} rounds");
        assert!(steps > rounds, "{steps} steps");
        // The work was real: every step and the user's transfer keep the number of
        // molecules, so the total follows the stirred tank's dC/dt = (C_in - C)/tau, round
        // by round with the inlet in force (mass balance of a stirred tank; common
        // practice): C <- C_in + (C - C_in) exp(-0.5 s / tau).
        let inlet_totals = [1.0, 0.5];
        let (mut total, mut inlet) = (0.0, inlet_totals[0]);
        for k in (0..20).chain(0..rounds) {
            total = inlet + (total - inlet) * (-0.5f64 / 2.0).exp();
            inlet = inlet_totals[k % 2];
        }
        let sum: f64 = stepper.state().iter().sum();
        assert_close(
            &format!("{la:?}: total concentration"),
            sum,
            total,
            1e-6,
            0.0,
        );
    }
}
