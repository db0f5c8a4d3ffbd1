//! The integration tests of this package in one test binary (one link at the test
//! profile's optimization level instead of one per file); each module is one
//! former test file. Allocation-counting tests keep binaries of their own: their
//! global allocator must not see other tests' threads.

mod check_cli;
mod cli;
mod common;
mod conservation;
mod fidelity_problems;
mod fit_rate_cli;
mod outputs_cli;
mod published_problems;
mod round_trip;
