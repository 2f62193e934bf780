//! Any bytes through the delimited-text reader (never the JCAMP-DX one, whatever the text
//! holds), with the column choice taken from the first byte, and where they read, through the
//! analysis: nothing may panic, and work stays bounded.
#![no_main]

use cuvette::spectra::analysis::{AnalysisSettings, analyze_absorbance, analyze_pl};
use cuvette::spectra::{ReadOptions, delimited};
use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    let Some((&choice, rest)) = data.split_first() else {
        return;
    };
    let text = String::from_utf8_lossy(rest);
    let opts = ReadOptions {
        // 0 means "not given"; small numbers, including the refused 0-based column, are tried.
        x_col: (choice & 0x03 != 0).then(|| usize::from(choice & 0x03) - 1),
        y_col: (choice & 0x0c != 0).then_some(usize::from((choice >> 2) & 0x03) + 1),
        x_unit: match choice >> 4 {
            1 => Some("eV".into()),
            2 => Some("1/cm".into()),
            3 => Some("um".into()),
            4 => Some("furlong".into()),
            _ => None,
        },
        ..Default::default()
    };
    if let Ok(raw) = delimited::read("fuzz", &text, &opts)
        && let Ok(t) = raw.to_trace("fuzz", opts.x_unit.as_deref())
    {
        let set = AnalysisSettings::default();
        let _ = analyze_absorbance(&t, &set);
        let _ = analyze_pl(&t, &set);
    }
});
