//! Fuzz target: model file decoding and use of whatever decodes (see
//! `copse_cli::harness::decode_model`).
#![no_main]
use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    let _ = copse_cli::harness::decode_model(data);
});
