//! The numeric factorization and the solves do not allocate (counted with a global
//! allocator that counts calls).

mod common;

use std::alloc::{GlobalAlloc, Layout, System};
use std::sync::atomic::{AtomicUsize, Ordering};

use common::hub_newton_matrix;
use stoik_sparse::FixedPatternLu;

struct Counting;

static ALLOCATIONS: AtomicUsize = AtomicUsize::new(0);

unsafe impl GlobalAlloc for Counting {
    unsafe fn alloc(&self, layout: Layout) -> *mut u8 {
        ALLOCATIONS.fetch_add(1, Ordering::Relaxed);
        unsafe { System.alloc(layout) }
    }
    unsafe fn dealloc(&self, ptr: *mut u8, layout: Layout) {
        unsafe { System.dealloc(ptr, layout) }
    }
    unsafe fn realloc(&self, ptr: *mut u8, layout: Layout, new_size: usize) -> *mut u8 {
        ALLOCATIONS.fetch_add(1, Ordering::Relaxed);
        unsafe { System.realloc(ptr, layout, new_size) }
    }
}

#[global_allocator]
static GLOBAL: Counting = Counting;

// One test function only: the counter is global, so a second test running in parallel would
// count its allocations here.
#[test]
fn refactorization_and_solves_do_not_allocate() {
    // Purely sparse factors (dense block disabled) and factors with a dense trailing block
    // (hub patterns of 500 and 1,500 species, where the block is chosen).
    for (n, allow_dense_block) in [(500, false), (500, true), (1500, true)] {
        let a = hub_newton_matrix(n, 1e-1, 7);
        let b = hub_newton_matrix(n, 1e1, 7);
        let mut lu = FixedPatternLu::with_dense_block(
            n,
            &a.column_starts,
            &a.row_indices,
            allow_dense_block,
        )
        .unwrap();
        assert_eq!(lu.dense_block_size() > 0, allow_dense_block, "n = {n}");
        let mut x = vec![1.0; n];
        let before = ALLOCATIONS.load(Ordering::Relaxed);
        for values in [&a.values, &b.values, &a.values] {
            lu.factorize(values).unwrap();
            lu.solve_in_place(&mut x).unwrap();
            lu.solve_transpose_in_place(&mut x).unwrap();
        }
        let after = ALLOCATIONS.load(Ordering::Relaxed);
        assert_eq!(lu.fallback_count(), 0);
        // Zero allocations: the design requirement (hot paths do not allocate).
        assert_eq!(
            after - before,
            0,
            "n = {n}, dense block {}",
            lu.dense_block_size()
        );
    }
}
