//! The one-pass paths held to the general ones: generated texts (preambles, units, rows of
//! every delimiter and decimal mark, two-column shapes) read both ways must give the same
//! spectra to the last bit, and the fast number reads what `str::parse` gives.

use super::*;

// ---- the one-pass paths against the general ones (issue 13, point 5) ----

use proptest::prelude::*;

/// Bit-for-bit what `str::parse` gives, which is correctly rounded: the known truth every
/// fast read is checked against.
fn std_bits(s: &str) -> Option<u64> {
    s.parse::<f64>().ok().map(f64::to_bits)
}

#[test]
fn the_fast_path_edge_cases_read_as_str_parse() {
    for s in [
        "0",
        "-0",
        "+0",
        "0.0",
        "-0.0",
        ".5",
        "5.",
        "-.5",
        "+5.",
        "420",
        "599.9901733",
        "-0.000496",
        // 2^53 is exact; one more is not a fast-path mantissa.
        "9007199254740992",
        "900719925474099.2",
        "0.0000000000000000000001",
        "1.7976931348623157",
        "123456789012345678",
        "0.1",
        "0.2",
        "0.3",
        "2.5",
        "1e3",
    ] {
        if let Some(v) = fast_decimal(s.as_bytes(), b'.') {
            assert_eq!(Some(v.to_bits()), std_bits(s), "{s}");
        }
    }
    assert_eq!(fast_decimal(b"9007199254740992", b'.'), Some(9_007_199_254_740_992.0));
    // Beyond the exact range: left to str::parse.
    for s in [
        "9007199254740993",
        "90071992547409.93",
        "1234567890123456789",
        "99999999999999999999",
        "18446744073709551617",
        "0.00000000000000000000001",
        "1e3",
        ".",
        "-",
        "+",
        "",
        "--1",
        "1..2",
        "1.2.3",
        "0x10",
        " 1",
        "1 ",
    ] {
        assert_eq!(fast_decimal(s.as_bytes(), b'.'), None, "{s}");
    }
    assert_eq!(decimal_prefix(b"1.25,3", b'.'), Some((1.25, 4)));
    assert_eq!(decimal_prefix(b"7e3", b'.'), Some((7.0, 1)));
    assert_eq!(decimal_prefix(b"0,5", b','), Some((0.5, 3)));
}

/// The general cell-by-cell scan and the one-pass scan of one line, as (kind, value bits).
fn scan_both(line: &str, delim: Delim) -> (String, String) {
    let spans = [(0, line.len())];
    let run = |plain: bool| {
        let mut src = TextRows {
            text: line,
            spans: &spans,
            delim,
            comma_decimal: false,
            odd: Oddities::default(),
            record: true,
            plain,
        };
        let mut out = vec![Some(-1.0)];
        let kind = src.scan(0, &mut out).map_err(|e| e.to_string());
        let bits: Vec<Option<u64>> = out.iter().map(|v| v.map(f64::to_bits)).collect();
        format!("{kind:?} {bits:?}")
    };
    (run(true), run(false))
}

fn cell_strategy() -> impl Strategy<Value = String> {
    prop_oneof![
        4 => "[+-]?[0-9]{1,6}\\.[0-9]{1,8}",
        2 => "[+-]?[0-9]{0,20}(\\.[0-9]{0,24})?",
        1 => "[0-9]{1,3}(e[+-]?[0-9]{1,3})?",
        1 => "[ \"]{0,2}[0-9]{1,4}\\.[0-9]{1,4}[ \"]{0,2}",
        1 => "[0-9a-zA-Z#,;. +\\-]{0,6}",
        1 => Just(String::new()),
    ]
}

/// A line above or below the data, of the kinds exports hold.
fn preamble_line() -> impl Strategy<Value = String> {
    prop_oneof![
        Just("Wavelength (nm),Absorbance".to_string()),
        Just("Wavelength (nm)\tIntensity (a.u.)".to_string()),
        Just("nm;A;B".to_string()),
        Just("# nm, A".to_string()),
        Just("# a comment".to_string()),
        Just("Sample: QD 7".to_string()),
        Just("Integration time = 100 ms".to_string()),
        Just("X units: eV".to_string()),
        Just(String::new()),
        Just("400 nm,A".to_string()),
        Just("400,abc".to_string()),
        Just("\"nm\",\"A\"".to_string()),
        Just("##########".to_string()),
        Just(">>> Begin spectral data <<<".to_string()),
        Just("End of data".to_string()),
        Just("Extended information".to_string()),
        Just("900,0.1".to_string()),
        Just("7".to_string()),
        "[a-z#:=, ]{0,12}",
    ]
}

/// A preamble line that states units or names columns, or says nothing ("," stands for
/// the file's delimiter).
fn unit_line() -> impl Strategy<Value = String> {
    prop_oneof![
        Just("Wavelength (nm),Absorbance".to_string()),
        Just("Energy (eV),Counts".to_string()),
        Just("Absorbance".to_string()),
        Just("x,y,z".to_string()),
        Just("# nm, A".to_string()),
        Just("# Energy (eV), counts".to_string()),
        Just("# nm: A".to_string()),
        Just("# X units = eV".to_string()),
        Just("X units: eV".to_string()),
        Just("Abscissa = um".to_string()),
        Just("Y units: counts".to_string()),
        Just("YUnits,%T".to_string()),
        Just("Sample: QD 7".to_string()),
        Just("400 nm,A".to_string()),
        Just(String::new()),
        Just("   ".to_string()),
        Just("##########".to_string()),
    ]
}

/// A row of the data: mostly plain numbers, two or three of them (`X` for the x the test
/// fills in), sometimes anything a cell may hold.
fn data_row() -> impl Strategy<Value = Vec<String>> {
    prop_oneof![
        16 => "0\\.[0-9]{1,6}".prop_map(|y| vec!["X".to_string(), y]),
        2 => ("-?0\\.[0-9]{1,6}", "[0-9]\\.[0-9]{1,3}").prop_map(|(y, z)| vec!["X".to_string(), y, z]),
        1 => proptest::collection::vec(cell_strategy(), 1..4),
    ]
}

fn delim_strategy() -> impl Strategy<Value = Delim> {
    prop_oneof![
        Just(Delim::Comma),
        Just(Delim::Tab),
        Just(Delim::Semicolon),
        Just(Delim::Space)
    ]
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(3000))]

    /// Every plain decimal the fast path takes reads bit for bit as `str::parse` reads it.
    #[test]
    fn fast_decimals_equal_str_parse(s in "[+-]?[0-9]{0,22}(\\.[0-9]{0,25})?") {
        if let Some(v) = fast_decimal(s.as_bytes(), b'.') {
            prop_assert_eq!(Some(v.to_bits()), std_bits(&s), "{}", s);
        }
        if let Some((v, used)) = decimal_prefix(s.as_bytes(), b'.') {
            prop_assert_eq!(Some(v.to_bits()), std_bits(&s[..used]), "{}", s);
        }
    }

    /// Any text: what the fast path takes, it takes exactly; a prefix ends where a plain
    /// decimal ends.
    #[test]
    fn decimal_prefixes_of_any_text_equal_str_parse(s in "[0-9.+\\-eE,]{0,30}") {
        if let Some((v, used)) = decimal_prefix(s.as_bytes(), b'.') {
            prop_assert_eq!(Some(v.to_bits()), std_bits(&s[..used]), "{}", s);
            prop_assert!(!s.as_bytes().get(used).is_some_and(u8::is_ascii_digit), "{}", s);
        }
        let comma = s.replace(',', "").replace('.', ",");
        if let Some(v) = fast_decimal(comma.as_bytes(), b',') {
            prop_assert_eq!(Some(v.to_bits()), std_bits(&comma.replace(',', ".")), "{}", comma);
        }
    }

    /// A number read in the middle of a text, with the text after its end in view (digits
    /// too, which are never part of it), reads as the same number cut out on its own.
    #[test]
    fn numbers_read_in_place_equal_numbers_cut_out(
        before in "[0-9.,]{0,9}",
        s in "[+-]?[0-9]{0,12}(\\.[0-9]{0,12})?[,;\t \r\n]?",
        after in "[0-9.\r\n]{0,12}",
    ) {
        let text = format!("{before}{s}{after}");
        let (a, b) = (before.len(), before.len() + s.len());
        let cut = decimal_prefix(s.as_bytes(), b'.').map(|(v, used)| (v.to_bits(), a + used));
        let in_place = decimal_at(text.as_bytes(), a, b, b'.').map(|(v, end)| (v.to_bits(), end));
        prop_assert_eq!(in_place, cut, "{:?} in {:?}", s, text);
    }

    /// Random doubles written the ways exports write them read back as `str::parse` reads
    /// the written text.
    #[test]
    fn written_doubles_read_as_str_parse(v in -1e6f64..1e6, decimals in 0usize..17) {
        let s = format!("{v:.decimals$}");
        if let Some(got) = fast_decimal(s.as_bytes(), b'.') {
            prop_assert_eq!(Some(got.to_bits()), std_bits(&s), "{}", s);
        }
    }

    /// A line reads the same on the one-pass path as on the general one, whatever it holds.
    #[test]
    fn plain_rows_scan_as_the_general_path(
        cells in proptest::collection::vec(cell_strategy(), 1..6),
        delim in delim_strategy(),
        other in prop_oneof![Just(","), Just("\t"), Just(";"), Just(" "), Just("  "), Just(", "), Just(" \t")],
        lead in "[ \t]{0,2}",
        trail in "[ \t,;]{0,2}",
    ) {
        // The file's own delimiter, or another one (a row the one-pass path must refuse).
        let own = match delim {
            Delim::Tab => "\t",
            Delim::Semicolon => ";",
            Delim::Comma => ",",
            Delim::Space => " ",
        };
        for sep in [own, other] {
            for line in [cells.join(sep), format!("{lead}{}{trail}", cells.join(sep))] {
                let (fast, general) = scan_both(&line, delim);
                prop_assert_eq!(fast, general, "{:?} {:?}", line, delim);
            }
        }
    }

    /// Whole files: the reader gives the same spectra (or the same refusal) with and
    /// without the one-pass rows and the one-pass walk, for files of every shape: a
    /// preamble of headers, key/value lines, comments, rules, markers and blank lines;
    /// rows mostly plain, some not; lines after the data.
    #[test]
    fn files_read_as_on_the_general_path(
        preamble in proptest::collection::vec(preamble_line(), 0..5),
        rows in proptest::collection::vec(data_row(), 0..40),
        after in proptest::collection::vec(preamble_line(), 0..3),
        delim in prop_oneof![Just(","), Just("\t"), Just(";"), Just(" ")],
        eol in prop_oneof![Just("\n"), Just("\r\n"), Just("\r")],
        last_eol in any::<bool>(),
    ) {
        let mut lines = preamble.clone();
        // "X" stands for an x that rises row by row, so that most files read.
        lines.extend(rows.iter().enumerate().map(|(i, r)| {
            let mut r = r.clone();
            if r[0] == "X" {
                r[0] = format!("{}.5", 400 + 2 * i);
            }
            r.join(delim)
        }));
        lines.extend(after.iter().cloned());
        let mut text = lines.join(eol);
        if last_eol {
            text.push_str(eol);
        }
        let (fast, general) = fast_and_general(&text);
        prop_assert_eq!(fast, general, "{:?}", text);
    }
    /// Tables of the one-pass walk's shape (a preamble without rows of numbers, then
    /// plain rows to the end), whose preamble says units and names columns in every way it
    /// can: the same spectra as the general walk gives.
    #[test]
    fn plain_tables_read_as_on_the_general_path(
        preamble in proptest::collection::vec(unit_line(), 0..5),
        n in 0usize..30,
        width in 2usize..4,
        delim in prop_oneof![Just(","), Just("\t"), Just(";"), Just(" ")],
        eol in prop_oneof![Just("\n"), Just("\r\n")],
    ) {
        let mut lines: Vec<String> = preamble.iter().map(|l| l.replace(',', delim)).collect();
        for i in 0..n {
            let cells: Vec<String> = (0..width).map(|c| match c {
                0 => format!("{}.5", 400 + 2 * i),
                _ => format!("0.{:04}", (i * 37 + c * 11) % 10_000),
            }).collect();
            lines.push(cells.join(delim));
        }
        let text = lines.join(eol);
        let show = |r: Result<Vec<RawSpectrum>>| match r {
            Ok(v) => format!("{v:?}"),
            Err(e) => e.to_string(),
        };
        let fast = show(read_text("f.csv", &text, None, &opts(), true));
        let general = show(read_text("f.csv", &text, None, &opts(), false));
        prop_assert_eq!(fast, general, "{:?}", text);
    }

    /// Line spans and endings are what the byte-by-byte split gives; the text also holds
    /// bytes one away from LF and CR and the UTF-8 bytes 0x8a and 0x8d (in 'Ê', 'č',
    /// 'Ċ'), which a word test that ignored the high bit would take for line ends.
    #[test]
    fn lines_split_as_byte_by_byte(text in "[a\r\n,\u{b}\u{e}\u{1}Êč\u{10a}]{0,120}") {
        let (spans, e) = split_lines(&text);
        let (want, w) = split_lines_reference(&text);
        prop_assert_eq!(spans, want);
        prop_assert_eq!((e.lf, e.crlf, e.cr), (w.lf, w.crlf, w.cr));
    }
}

/// A first line for the one-pass two-column reading: headers it takes, and near misses it
/// must leave to the general reader (float words, markers, comments, a leading blank or
/// number, a CR inside, quotes, key/value lines).
fn two_column_header() -> impl Strategy<Value = String> {
    prop_oneof![
        4 => Just("Wavelength (nm),Absorbance".to_string()),
        1 => Just("Wavelength (nm)\tAbsorbance".to_string()),
        1 => Just("Energy (eV);Counts".to_string()),
        1 => Just("nm  %T".to_string()),
        1 => Just("Absorbance".to_string()),
        1 => Just("nan,A".to_string()),
        1 => Just("Inf nm,A".to_string()),
        1 => Just("infinity\u{a0},x".to_string()),
        1 => Just("NaN".to_string()),
        1 => Just("Begin spectral data".to_string()),
        1 => Just("End of data".to_string()),
        1 => Just("# nm, A".to_string()),
        1 => Just(" nm,A".to_string()),
        1 => Just("1 nm,A".to_string()),
        1 => Just("nm\r,A".to_string()),
        1 => Just("\"nm\",\"A\"".to_string()),
        1 => Just("X units: eV".to_string()),
        1 => Just("x,1,5".to_string()),
        1 => "[a-zA-Z][a-zA-Z0-9 ,;\t().%:=#\"-]{0,14}",
    ]
}

/// A cell of a two-column row: mostly plain decimals, sometimes what the one-pass reading
/// refuses (an exponent, too many digits, a quote, a blank, a word, nothing).
fn two_column_cell() -> impl Strategy<Value = String> {
    prop_oneof![
        12 => "[+-]?[0-9]{1,4}(\\.[0-9]{0,7})?",
        1 => "\\.[0-9]{1,3}",
        1 => "[0-9]{1,2}e-?[0-9]",
        1 => "[0-9]{20,21}",
        1 => "\"[0-9]\\.[0-9]\"",
        1 => " [0-9]",
        1 => "[a-z]{1,3}",
        1 => Just(String::new()),
    ]
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(3000))]

    /// The one-pass two-column reading gives what the general reader gives (the same
    /// spectra bit for bit, or the same refusal) on files of its shape and on near misses:
    /// odd first lines, odd cells, a row with another delimiter or another width, blanks
    /// around a delimiter, CR, CRLF and mixed endings, blank lines and notes at the end.
    #[test]
    fn two_column_files_read_as_on_the_general_path(
        header in proptest::option::of(two_column_header()),
        rows in proptest::collection::vec(
            ("[+-]?[0-9]{1,4}(\\.[0-9]{0,7})?", "[+-]?[0-9]{1,4}(\\.[0-9]{0,7})?"),
            1..30,
        ),
        flaw in proptest::option::of((0usize..30, two_column_cell(), 0u8..7)),
        delim in prop_oneof![Just(","), Just("\t"), Just(";"), Just(" ")],
        eol in prop_oneof![4 => Just("\n"), 2 => Just("\r\n"), 1 => Just("\r")],
        ending in prop_oneof![4 => Just(""), 4 => Just("\n"), 2 => Just("\r\n"), 1 => Just("\n\n"), 1 => Just("\nnotes: none\n")],
        rising in prop_oneof![4 => Just(true), 1 => Just(false)],
    ) {
        let mut text = header.map(|h| format!("{h}{eol}")).unwrap_or_default();
        let lines: Vec<String> = rows
            .iter()
            .enumerate()
            .map(|(i, (x, y))| {
                // Mostly a rising x, so that most files read to the end.
                let x = if rising { format!("{}", 400 + 3 * i) } else { x.clone() };
                let Some((_, cell, how)) = flaw.as_ref().filter(|f| f.0 == i) else {
                    return format!("{x}{delim}{y}");
                };
                match how {
                    0 => format!("{x}{delim} {y}"),
                    1 => format!("{x},{y};1"),
                    2 => format!("{x}{delim}{y}{delim}"),
                    3 => format!("{x}{delim}{y}\r"),
                    4 => x.to_string(),
                    5 => format!("{cell}{delim}{y}"),
                    _ => format!("{x}{delim}{cell}"),
                }
            })
            .collect();
        text.push_str(&lines.join(eol));
        text.push_str(ending);
        let (fast, general) = fast_and_general(&text);
        prop_assert_eq!(fast, general, "{:?}", text);
    }
}

/// The one-pass two-column reading is the one taken for the shape `analyze` is timed on,
/// for its blank-, tab- and semicolon-separated and CRLF relatives and for a file without
/// a header; and it is not taken where the general reader must look further.
#[test]
fn two_column_shapes_take_the_one_pass_reading() {
    let rows = |sep: &str, eol: &str| -> String {
        (0..20)
            .map(|i| format!("{},{:.6}{eol}", 300 + i, 0.5 + 0.01 * i as f64).replace(',', sep))
            .collect()
    };
    for (text, delim) in [
        (format!("Wavelength (nm),Absorbance\n{}", rows(",", "\n")), Delim::Comma),
        (format!("Wavelength (nm)\tA\r\n{}", rows("\t", "\r\n")), Delim::Tab),
        (format!("nm;A\n{}", rows(";", "\n")), Delim::Semicolon),
        (format!("nm A\n{}", rows(" ", "\n").trim_end()), Delim::Space),
        (rows(",", "\n"), Delim::Comma),
    ] {
        let (got, table) = two_columns(&text).unwrap_or_else(|| panic!("not taken: {text:?}"));
        assert_eq!(got, delim, "{text:?}");
        assert_eq!(table.lines.len(), 20, "{text:?}");
        assert_eq!(
            format!("{:?}", read_text("f.csv", &text, None, &opts(), true).unwrap()),
            format!("{:?}", read_text("f.csv", &text, None, &opts(), false).unwrap()),
        );
    }
    for text in [
        "nan,A\n400,0.1\n401,0.2\n",
        "Begin spectral data\n400,0.1\n401,0.2\n",
        "# nm, A\n400,0.1\n401,0.2\n",
        "nm,A\n400,0.1\n401,0.2\n\n",
        "nm,A\n400,0.1\r401,0.2\n",
        "nm,A\n400,0.1\n401,1e-3\n",
        "nm,A\n400,0.1,7\n401,0.2,8\n",
    ] {
        assert!(two_columns(text).is_none(), "{text:?}");
    }
}

/// The split as it was written before the chunked search: the reference it must equal.
fn split_lines_reference(text: &str) -> (Vec<(usize, usize)>, Endings) {
    let b = text.as_bytes();
    let mut spans = Vec::new();
    let mut endings = Endings::default();
    let total_cr = b.iter().filter(|&&c| c == b'\r').count();
    if text.contains('\n') {
        let mut start = 0;
        while let Some(off) = text[start..].find('\n') {
            let end = start + off;
            if end > start && b[end - 1] == b'\r' {
                spans.push((start, end - 1));
                endings.crlf += 1;
            } else {
                spans.push((start, end));
                endings.lf += 1;
            }
            start = end + 1;
        }
        if start < b.len() {
            let end = if b[b.len() - 1] == b'\r' { b.len() - 1 } else { b.len() };
            endings.crlf += usize::from(end < b.len());
            spans.push((start, end));
        }
        if total_cr == endings.crlf {
            return (spans, endings);
        }
        spans.clear();
        endings = Endings::default();
    }
    let mut start = 0;
    let mut i = 0;
    while i < b.len() {
        match b[i] {
            b'\n' => {
                spans.push((start, i));
                endings.lf += 1;
                start = i + 1;
            }
            b'\r' => {
                spans.push((start, i));
                if i + 1 < b.len() && b[i + 1] == b'\n' {
                    endings.crlf += 1;
                    i += 1;
                } else {
                    endings.cr += 1;
                }
                start = i + 1;
            }
            _ => {}
        }
        i += 1;
    }
    if start < b.len() {
        spans.push((start, b.len()));
    }
    (spans, endings)
}
