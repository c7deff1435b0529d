//! Inputs found by the fuzz tests (tests/fuzz_readers.rs) that once crashed or misbehaved.
