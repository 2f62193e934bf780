//! Any text through the query parser and, where it parses, evaluated against the facts of
//! the demo lab (built once, in memory): nothing may panic, and work stays bounded.
#![no_main]

use cuvette::search::{Facts, filter, load_facts, parse};
use libfuzzer_sys::fuzz_target;
use std::sync::OnceLock;

fn facts() -> &'static Vec<Facts> {
    static FACTS: OnceLock<Vec<Facts>> = OnceLock::new();
    FACTS.get_or_init(|| {
        let mut st = cuvette::lab::in_memory("fuzz").expect("an in-memory store opens");
        cuvette::lab::demo::build(&mut st, None, |_, _| {}).expect("the demo lab builds");
        st.read(|tx| load_facts(tx)).expect("facts load")
    })
}

fuzz_target!(|data: &[u8]| {
    if let Ok(text) = std::str::from_utf8(data)
        && let Ok(q) = parse(text)
    {
        let _ = filter(facts(), &q);
    }
});
