//! Fuzz target for the input reader: arbitrary UTF-8 text given to the plant, cases and scheme
//! parsers. Any panic, overflow or hang is a bug; a refusal with diagnostics is the expected
//! outcome for almost every input. It must not test anything but the reader.

#![no_main]

use libfuzzer_sys::fuzz_target;
use nadir::input::{parse_cases, parse_plant, parse_scheme};
use std::sync::OnceLock;

/// A small valid plant (the one of tests/bad_input/) to check cases and scheme text against.
fn plant() -> &'static nadir::model::Plant {
    static P: OnceLock<nadir::model::Plant> = OnceLock::new();
    P.get_or_init(|| {
        let text = include_str!("../../tests/bad_input/base_plant.yaml");
        match parse_plant(text, "base_plant.yaml") {
            Ok(p) => p,
            Err(d) => panic!("the fuzz seed plant must be valid: {d:?}"),
        }
    })
}

fuzz_target!(|data: &[u8]| {
    let Ok(text) = std::str::from_utf8(data) else {
        return;
    };
    for result in [
        parse_plant(text, "fuzz.yaml").map(|_| ()),
        parse_cases(text, "fuzz.yaml", plant()).map(|_| ()),
        parse_scheme(text, "fuzz.yaml", plant()).map(|_| ()),
    ] {
        if let Err(d) = result {
            assert!(!d.is_empty(), "refused without a diagnostic");
            assert!(d.iter().all(|x| !x.message.is_empty()), "empty message");
        }
    }
});
