//! Any text through the query parser and, where it parses, a filter over no batches.
#![no_main]

use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    if let Ok(text) = std::str::from_utf8(data)
        && let Ok(q) = cuvette::search::parse(text)
    {
        let _ = cuvette::search::filter(&[], &q);
    }
});
