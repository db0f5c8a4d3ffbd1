//! The evaluation routines do not allocate on mechanisms with pressure-dependent steps
//! (design rule: hot paths do not allocate). A counting global allocator (its own test
//! binary, one test) counts allocations while every routine runs.

use std::alloc::{GlobalAlloc, Layout, System};
use std::sync::atomic::{AtomicUsize, Ordering};
use stoik_kinetics::Kinetics;
use stoik_mechanism::parse_mechanism;

struct Counting;

static ALLOCATIONS: AtomicUsize = AtomicUsize::new(0);

unsafe impl GlobalAlloc for Counting {
    unsafe fn alloc(&self, layout: Layout) -> *mut u8 {
        ALLOCATIONS.fetch_add(1, Ordering::Relaxed);
        // SAFETY: forwards the caller's layout to the system allocator.
        unsafe { System.alloc(layout) }
    }
    unsafe fn dealloc(&self, ptr: *mut u8, layout: Layout) {
        // SAFETY: `ptr` came from `alloc` above with this layout.
        unsafe { System.dealloc(ptr, layout) }
    }
}

#[global_allocator]
static GLOBAL: Counting = Counting;

const MECHANISM: &str = r#"stoik_mechanism = 1
[[species]]
name = "A"
[[species]]
name = "B"
[[species]]
name = "C"
[[step]]
equation = "A -> B"
forward = { prefactor = 1e13 }
falloff = { low_pressure = { prefactor = 1e17 }, broadening = "troe", troe = { a = 0.5, t3 = 100, t1 = 1000, t2 = 1000 } }
third_body = { efficiency = { C = 2 } }
[[step]]
equation = "A + B -> C"
forward = { prefactor = 1e12 }
chemically_activated = { high_pressure = { prefactor = 1e6 }, broadening = "sri", sri = { a = 0.45, b = 797, c = 979 } }
third_body = { species = "C" }
[[step]]
equation = "B + B -> C"
termolecular_300k = { low_pressure_300k = 1e15, high_pressure_300k = 1e12 }
third_body = {}
[[step]]
equation = "C -> A"
pressure_table = [
  { pressure = "0.1 atm", prefactor = 1e3 },
  { pressure = "10 atm", prefactor = 1e5 },
]
"#;

#[test]
fn evaluation_of_pressure_dependent_steps_does_not_allocate() {
    let mechanism = parse_mechanism(MECHANISM, "t.toml")
        .unwrap_or_else(|e| panic!("{e}"))
        .mechanism;
    let kinetics = Kinetics::compile(&mechanism).unwrap();
    let n = kinetics.n_species();
    let mut k = kinetics.rate_constants(1000.0);
    let mut slopes = kinetics.rate_constants(1000.0);
    let c = [3.0, 2.0, 7.0];
    let mut w = vec![0.0; n];
    let mut dw_dt = vec![0.0; n];
    let mut q = vec![0.0; kinetics.n_steps()];
    let mut kf = vec![0.0; kinetics.n_steps()];
    let mut dense = vec![0.0; n * n];
    let mut values = vec![0.0; kinetics.jacobian_pattern().nnz()];
    let before = ALLOCATIONS.load(Ordering::Relaxed);
    for round in 0..10 {
        let t = 900.0 + 20.0 * round as f64;
        kinetics.evaluate_rate_constants(t, &mut k);
        kinetics.evaluate_rate_constant_slopes(t, &k, &mut slopes);
        kinetics.production_rates(&k, &c, &mut w);
        kinetics.rates_of_progress(&k, &c, &mut q);
        kinetics.effective_forward_rate_constants(&k, &c, &mut kf);
        kinetics.jacobian_dense(&k, &c, &mut dense);
        kinetics.jacobian_sparse(&k, &c, &mut values);
        kinetics.production_rate_slopes(&k, &slopes, &c, &mut dw_dt);
    }
    let after = ALLOCATIONS.load(Ordering::Relaxed);
    // The routines ran: every species changes (a check that cannot pass on all zeros).
    assert!(w.iter().all(|x| *x != 0.0), "{w:?}");
    assert_eq!(after - before, 0, "allocations during evaluation");
}
