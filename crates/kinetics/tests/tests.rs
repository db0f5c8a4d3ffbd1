//! The integration tests of this package in one test binary (one link at the test
//! profile's optimization level instead of one per file); each module is one
//! former test file. Allocation-counting tests keep binaries of their own: their
//! global allocator must not see other tests' threads.

mod equilibrium;
mod falloff;
mod hand_built;
mod rate_range;
mod rates_and_jacobian;
