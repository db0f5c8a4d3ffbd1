//! The integration tests of this package in one test binary (one link at the test
//! profile's optimization level instead of one per file); each module is one
//! former test file. Allocation-counting tests keep binaries of their own: their
//! global allocator must not see other tests' threads.

mod batch;
mod box_model;
mod closed_forms;
mod common;
mod energy;
mod hand_built;
mod invariants;
mod located_on_steps;
mod non_negativity;
mod reference_problems;
mod stepping_and_failures;
mod thermo_equilibrium;
