//! Fuzz target: CSV reading, schema inference, a tiny forest, its model file, and
//! scoring the same bytes (see `copse_cli::harness::ingest_csv`).
#![no_main]
use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    let _ = copse_cli::harness::ingest_csv(data);
});
