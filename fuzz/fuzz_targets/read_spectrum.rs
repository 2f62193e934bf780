//! Any bytes through every spectrum reader and, where they read, through the analysis:
//! nothing may panic.
#![no_main]

use cuvette::spectra::analysis::{AnalysisSettings, analyze_absorbance, analyze_pl};
use cuvette::spectra::{ReadOptions, read_bytes};
use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    if let Ok(raw) = read_bytes("fuzz", data, &ReadOptions::default())
        && let Ok(t) = raw.to_trace("fuzz", None)
    {
        let set = AnalysisSettings::default();
        let _ = analyze_absorbance(&t, &set);
        let _ = analyze_pl(&t, &set);
    }
});
