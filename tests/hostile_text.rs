//! Outputs that cannot be turned against their reader (issue 10, point 8): names, notes and
//! labels full of terminal escapes, formula starts and markup reach the UI, the text and JSON
//! output, the CSV files, the SVG plots and the handover pack harmless; output files are never
//! clobbered or written through a symlink without `--force`; `demo` keeps real work.
#![allow(clippy::unwrap_used, clippy::panic, clippy::expect_used)]

mod common;
use common::*;
use crossterm::event::{KeyCode, KeyEvent, KeyModifiers};
use cuvette::safe_text::is_hazard;
use cuvette::tui::app::App;
use cuvette::tui::{draw, keys};
use ratatui::Terminal;
use ratatui::backend::TestBackend;

/// Sets the terminal title (OSC 0), writes the clipboard (OSC 52), clears the screen (CSI 2 J),
/// opens an 8-bit CSI (U+009B) and reverses the text direction (U+202E).
const ESCAPES: &str = "\u{1b}]0;pwned\u{7}|\u{1b}]52;c;ZWNobyBoaQ==\u{7}|\u{1b}[2J|\u{9b}31m|\u{202e}lmth";

fn hostile(prefix: &str) -> String {
    format!("{prefix} {ESCAPES}")
}

/// A lab whose person, location, batch, notes, aliquot stage and vial label and position are
/// all hostile. Batch 1 has a timed and a staged aliquot and one vial.
fn hostile_lab() -> Lab {
    let lab = Lab::new();
    lab.ok(&["init"]);
    lab.ok(&["person", "add", &hostile("=Ann")]);
    lab.ok(&["location", "add", &hostile("+Fridge"), "--kind", "fridge"]);
    lab.ok(&[
        "batch",
        "new",
        "--material",
        "CdSe",
        &format!("--name={}", hostile("-B1 <script>alert(1)</script> ]]> & \"q\" 'a'")),
        "--operator",
        &hostile("=Ann"),
        "--notes",
        &hostile("@note\nsecond line\r"),
    ]);
    let f1 = lab.abs_file("a1.csv", 520.0);
    let f2 = lab.abs_file("a2.csv", 560.0);
    lab.ok(&["aliquot", "add", "1", "--abs", s(&f1), "--minutes", "2"]);
    lab.ok(&[
        "aliquot",
        "add",
        "1",
        "--abs",
        s(&f2),
        "--stage",
        &hostile("=cmd|' /C calc'!A0 </text><x>"),
    ]);
    lab.ok(&[
        "vial",
        "new",
        "1",
        "--ml",
        "2",
        "--location",
        &hostile("+Fridge"),
        "--label",
        &hostile("=HYPERLINK(\"http://x\")"),
        "--position",
        &hostile("\tbox 1"),
        "--owner",
        &hostile("=Ann"),
        "--conc",
        "0.00001",
    ]);
    lab
}

fn buffer_of(app: &App, w: u16, h: u16) -> ratatui::buffer::Buffer {
    let mut t = Terminal::new(TestBackend::new(w, h)).unwrap();
    t.draw(|f| draw::draw(f, app)).unwrap();
    t.backend().buffer().clone()
}

fn text_of(buf: &ratatui::buffer::Buffer) -> String {
    let mut out = String::new();
    for y in 0..buf.area.height {
        for x in 0..buf.area.width {
            out.push_str(buf[(x, y)].symbol());
        }
        out.push('\n');
    }
    out
}

fn assert_clean_buffer(app: &App, what: &str) -> String {
    let mut all = String::new();
    for (w, h) in [(80, 24), (200, 50)] {
        let buf = buffer_of(app, w, h);
        for y in 0..buf.area.height {
            for x in 0..buf.area.width {
                let sym = buf[(x, y)].symbol();
                assert!(
                    !sym.chars().any(is_hazard),
                    "{what} at {w}x{h}: cell ({x},{y}) holds {sym:?}"
                );
            }
        }
        all.push_str(&text_of(&buf));
    }
    all
}

fn press(app: &mut App, code: KeyCode) {
    app.on_key(KeyEvent::new(code, KeyModifiers::NONE));
    // What the key asked of the UI's worker (a sheet) is on screen before it is looked at.
    assert!(app.settle_workers(std::time::Duration::from_secs(60)));
}

#[test]
fn escape_sequences_in_names_never_reach_a_ui_cell() {
    let lab = hostile_lab();
    let store = cuvette::lab::open(&lab.db, "Test Runner").unwrap();
    let mut app = App::new(store, keys::KeyMap::new(&Default::default()).unwrap());
    let s = assert_clean_buffer(&app, "ledger");
    assert!(s.contains("pwned"), "the name is still shown, made harmless: {s}");
    press(&mut app, KeyCode::Enter);
    assert_clean_buffer(&app, "batch sheet");
    press(&mut app, KeyCode::Char('p'));
    assert_clean_buffer(&app, "batch sheet, PL");
    for (key, view) in [('2', "shelf"), ('3', "calibrations"), ('4', "trail"), ('1', "ledger")] {
        press(&mut app, KeyCode::Char(key));
        assert_clean_buffer(&app, view);
    }
    press(&mut app, KeyCode::Char('?'));
    assert_clean_buffer(&app, "help");
    press(&mut app, KeyCode::Esc);
    // A query typed with the names' escapes in it, echoed in the search line.
    press(&mut app, KeyCode::Char('/'));
    for c in ESCAPES.chars() {
        press(&mut app, KeyCode::Char(c));
    }
    assert_clean_buffer(&app, "search line");
}

/// Text for people: no control character but the newlines and tabs of the layout.
fn assert_clean_text(text: &str, what: &str) {
    let bad: Vec<char> = text
        .chars()
        .filter(|c| is_hazard(*c) && *c != '\n' && *c != '\t')
        .collect();
    assert!(bad.is_empty(), "{what} prints {bad:?}: {text}");
}

#[test]
fn text_output_shows_escapes_as_visible_harmless_characters() {
    let lab = hostile_lab();
    for args in [
        &["batch", "show", "1"][..],
        &["batch", "list"],
        &["shelf", "--all"],
        &["vial", "show", "1"],
        &["person", "list"],
        &["location", "list"],
        &["log", "--limit", "50"],
        &["explain", "1"],
        &["find", "material CdSe"],
    ] {
        let o = lab.ok(args);
        assert_clean_text(&o.stdout, &format!("{args:?}"));
        assert_clean_text(&o.stderr, &format!("{args:?} (stderr)"));
    }
    let o = lab.ok(&["batch", "show", "1"]);
    assert!(
        o.stdout.contains("\u{241b}]0;pwned\u{2407}"),
        "ESC and BEL shown as pictures: {}",
        o.stdout
    );
    assert!(o.stdout.contains("<U+009B>31m"), "{}", o.stdout);
    // An error message naming a hostile name is one harmless line.
    let o = lab.run(&[
        "batch",
        "new",
        "--material",
        "CdSe",
        "--name",
        "x",
        "--operator",
        &hostile("Nobody"),
    ]);
    assert_eq!(o.code, 1, "{}", o.stderr);
    assert_clean_text(&o.stderr, "error message");
    assert_eq!(o.stderr.trim().lines().count(), 1, "{}", o.stderr);
}

#[test]
fn json_output_escapes_c1_and_bidi_controls_and_keeps_the_data() {
    let lab = hostile_lab();
    for args in [
        &["batch", "show", "1", "--json"][..],
        &["batch", "list", "--json"],
        &["shelf", "--all", "--json"],
        &["person", "list", "--json"],
        &["log", "--json"],
    ] {
        let o = lab.ok(args);
        assert!(
            !o.stdout.chars().any(|c| is_hazard(c) && c != '\n'),
            "{args:?} writes a control raw: {}",
            o.stdout
        );
    }
    let b = lab.ok(&["batch", "show", "1", "--json"]).json();
    assert_eq!(
        b["name"].as_str().unwrap(),
        hostile("-B1 <script>alert(1)</script> ]]> & \"q\" 'a'"),
        "the JSON still holds the name exactly"
    );
    assert_eq!(b["notes"].as_str().unwrap(), hostile("@note\nsecond line\r"));
}

/// Every cell of a CSV file, read back with the csv crate, by column name.
fn read_csv(path: &std::path::Path) -> Vec<std::collections::BTreeMap<String, String>> {
    let mut r = csv::Reader::from_path(path).unwrap();
    let head: Vec<String> = r.headers().unwrap().iter().map(String::from).collect();
    r.records()
        .map(|rec| {
            let rec = rec.unwrap();
            head.iter().cloned().zip(rec.iter().map(String::from)).collect()
        })
        .collect()
}

/// A spreadsheet runs a cell as a formula when it starts with one of these (OWASP's
/// CSV-injection guidance).
fn formula_start(cell: &str) -> bool {
    cell.starts_with(['=', '+', '-', '@', '\t', '\r'])
}

#[test]
fn csv_cells_that_a_spreadsheet_would_run_are_neutralised() {
    let lab = hostile_lab();
    // An aliquot whose spectrum sits below zero (a baseline set on a darker blank), so the
    // export carries negative absorbances that must stay numbers.
    let (x, y) = cuvette::lab::demo::absorbance("CdSe", 540.0, 0.04, 0.1, 0.0, &mut cuvette::lab::demo::Rng::new(7));
    let y: Vec<f64> = y.iter().map(|v| v - 0.5).collect();
    let low = lab.write("low.csv", &csv(&x, &y));
    lab.ok(&["aliquot", "add", "1", "--abs", s(&low), "--minutes", "4"]);
    let dir = lab.path("si");
    lab.ok(&["export", "--format", "csv", "--out", s(&dir)]);
    let batches = read_csv(&dir.join("batches.csv"));
    let b = &batches[0];
    for col in ["name", "operator", "notes"] {
        assert!(b[col].starts_with('\''), "{col}: {:?}", b[col]);
        assert_eq!(
            &b[col][1..],
            &lab.ok(&["batch", "show", "1", "--json"]).json()[col]
                .as_str()
                .unwrap()
                .to_string(),
            "{col} keeps its text after the quote"
        );
    }
    let aliquots = read_csv(&dir.join("aliquots.csv"));
    assert!(aliquots.iter().any(|a| a["stage"].starts_with("'=cmd")), "{aliquots:?}");
    let values = read_csv(&dir.join("derived_values.csv"));
    let negative: Vec<&String> = values
        .iter()
        .map(|v| &v["value"])
        .filter(|v| v.starts_with('-'))
        .collect();
    assert!(!negative.is_empty(), "a negative absorbance is exported");
    for v in &negative {
        assert!(v.parse::<f64>().unwrap() < 0.0, "stays a number: {v}");
    }
    for (file, rows) in [("batches", &batches), ("aliquots", &aliquots)] {
        for row in rows.iter() {
            for (col, cell) in row {
                assert!(!formula_start(cell), "{file}.csv {col} = {cell:?}");
            }
        }
    }
    for row in &values {
        for (col, cell) in row {
            assert!(
                col == "value" || !formula_start(cell),
                "derived_values.csv {col} = {cell:?}"
            );
        }
    }

    // The handover pack's inventory.
    lab.ok(&["person", "add", "Bob Example"]);
    let pack = lab.path("pack");
    lab.ok(&[
        "handover",
        "--from",
        &hostile("=Ann"),
        "--to",
        "Bob Example",
        "--out",
        s(&pack),
    ]);
    let inv = read_csv(&pack.join("inventory.csv"));
    assert_eq!(inv.len(), 1);
    for col in ["label", "location", "position"] {
        assert!(inv[0][col].starts_with('\''), "{col}: {:?}", inv[0][col]);
    }
    for (col, cell) in &inv[0] {
        assert!(!formula_start(cell), "inventory.csv {col} = {cell:?}");
    }
    assert_eq!(inv[0]["volume_ml"].parse::<f64>().unwrap(), 2.0);
}

/// Every text node of an SVG, which must parse as strict XML.
fn svg_texts(svg: &str, what: &str) -> Vec<String> {
    let doc = roxmltree::Document::parse(svg).unwrap_or_else(|e| panic!("{what} is not well-formed XML: {e}"));
    assert!(
        doc.descendants()
            .all(|n| !n.is_element() || n.tag_name().name() != "script"),
        "{what} holds a script element"
    );
    doc.descendants()
        .filter(|n| n.is_text())
        .map(|n| n.text().unwrap_or("").to_string())
        .collect()
}

const MARKUP_NAME: &str = "-B1 <script>alert(1)</script> ]]> & \"q\" 'a'";

#[test]
fn svg_and_html_are_well_formed_whatever_the_names_hold() {
    let lab = hostile_lab();
    let out = lab.path("b1.svg");
    lab.ok(&["plot", "1", "--out", s(&out)]);
    let svg = std::fs::read_to_string(&out).unwrap();
    let texts = svg_texts(&svg, "plot --out");
    assert!(
        texts.iter().any(|t| t.contains(MARKUP_NAME) && t.contains("pwned")),
        "the batch name is text in the title: {texts:?}"
    );
    assert!(
        texts.iter().any(|t| t.contains("=cmd|' /C calc'!A0 </text><x>")),
        "the stage is a legend text: {texts:?}"
    );
    // The SVG on stdout is the same document.
    svg_texts(&lab.ok(&["plot", "1"]).stdout, "plot to stdout");

    lab.ok(&["person", "add", "Bob Example"]);
    let pack = lab.path("pack");
    lab.ok(&[
        "handover",
        "--from",
        &hostile("=Ann"),
        "--to",
        "Bob Example",
        "--out",
        s(&pack),
    ]);
    let html = std::fs::read_to_string(pack.join("index.html")).unwrap();
    assert!(
        !html.chars().any(|c| is_hazard(c) && c != '\n'),
        "no control character in the pack"
    );
    let doc = scraper::Html::parse_document(&html);
    assert!(doc.errors.is_empty(), "HTML parse errors: {:?}", doc.errors);
    let sel = |q: &str| scraper::Selector::parse(q).unwrap();
    assert_eq!(doc.select(&sel("script")).count(), 0, "a name became a script element");
    assert_eq!(doc.select(&sel("x")).count(), 0, "a stage became an element");
    let h2: Vec<String> = doc
        .select(&sel("section.batch h2"))
        .map(|e| e.text().collect())
        .collect();
    assert!(h2.iter().any(|t| t.contains(MARKUP_NAME)), "the name is text: {h2:?}");
    let label: String = doc.select(&sel("div.label b")).flat_map(|e| e.text()).collect();
    assert!(label.starts_with("=HYPERLINK(\"http://x\")"), "{label}");
    let title: String = doc.select(&sel("title")).flat_map(|e| e.text()).collect();
    assert!(title.contains("=Ann"), "{title}");
    // Each inline plot is itself well-formed XML.
    let mut rest = html.as_str();
    let mut plots = 0;
    while let Some(start) = rest.find("<svg") {
        let end = rest[start..].find("</svg>").unwrap() + start + "</svg>".len();
        svg_texts(&rest[start..end], "an inline plot");
        plots += 1;
        rest = &rest[end..];
    }
    assert_eq!(plots, 1);
}

fn item(
    label: &str,
    minutes: Option<f64>,
    nm: Vec<f64>,
    y: Vec<f64>,
    diameter_nm: Option<f64>,
) -> cuvette::report::plot::SeriesItem {
    cuvette::report::plot::SeriesItem {
        label: label.into(),
        minutes,
        abs: Some(cuvette::spectra::Trace {
            nm: nm.clone(),
            y: y.clone(),
        }),
        pl: Some(cuvette::spectra::Trace { nm, y }),
        peak_nm: None,
        diameter_nm,
        dispersion_pct: diameter_nm.map(|d| d * 2.0),
    }
}

#[test]
fn a_plot_of_extreme_values_is_drawn_or_refused_never_loops() {
    // Synthetic inputs at the edges of f64 and of a series: one point, equal values, the
    // largest finite numbers, NaN and infinities among good points.
    let cases: Vec<(&str, Vec<cuvette::report::plot::SeriesItem>)> = vec![
        (
            "one point",
            vec![item("a", Some(1.0), vec![500.0], vec![0.1], Some(3.0))],
        ),
        (
            "equal values",
            vec![
                item(
                    "a",
                    Some(2.0),
                    vec![500.0, 500.0, 500.0],
                    vec![0.2, 0.2, 0.2],
                    Some(3.0),
                ),
                item("b", Some(2.0), vec![500.0, 500.0], vec![0.2, 0.2], Some(3.0)),
            ],
        ),
        (
            "1e308",
            vec![item(
                "a",
                Some(1e308),
                vec![400.0, 1e308],
                vec![1e308, -1e308],
                Some(1e308),
            )],
        ),
        (
            "tiny span",
            vec![item(
                "a",
                Some(1.0),
                vec![500.0, 500.0 + 1e-12],
                vec![1e-300, 2e-300],
                Some(1e-300),
            )],
        ),
        (
            "not finite among good points",
            vec![
                item(
                    "a",
                    Some(f64::NAN),
                    vec![400.0, f64::NAN, 500.0, f64::INFINITY],
                    vec![0.1, 0.2, f64::NAN, 0.3],
                    Some(f64::INFINITY),
                ),
                item("b", Some(3.0), vec![450.0, 460.0], vec![0.1, 0.15], Some(3.2)),
            ],
        ),
        (
            "nothing finite",
            vec![item(
                "a",
                Some(f64::NAN),
                vec![f64::NAN],
                vec![f64::NAN],
                Some(f64::NAN),
            )],
        ),
        (
            "negative minutes and sizes",
            vec![item("a", Some(-5.0), vec![400.0, 500.0], vec![-0.1, -0.2], Some(-1.0))],
        ),
    ];
    for (what, items) in cases {
        let svg = cuvette::report::plot_series_svg(what, &items).unwrap_or_else(|e| panic!("{what}: {e}"));
        // Bounded output: a handful of ticks and the points, not a runaway of grid lines.
        assert!(svg.len() < 200_000, "{what}: {} bytes", svg.len());
        assert!(
            !svg.contains("NaN") && !svg.contains("inf"),
            "{what}: a non-finite coordinate was written"
        );
        svg_texts(&svg, what);
    }
}

#[cfg(unix)]
#[test]
fn plot_and_export_never_clobber_a_file_or_write_through_a_symlink_without_force() {
    let lab = hostile_lab();
    let outside = tempfile::tempdir().unwrap();
    let precious = outside.path().join("precious.txt");
    std::fs::write(&precious, "keep me").unwrap();

    // plot --out: an existing file, then a symlink out of the folder.
    let svg = lab.write("old.svg", "an older plot");
    lab.refuses(&["plot", "1", "--out", s(&svg)], "already exists");
    assert_eq!(std::fs::read_to_string(&svg).unwrap(), "an older plot");
    let link = lab.path("link.svg");
    std::os::unix::fs::symlink(&precious, &link).unwrap();
    lab.refuses(&["plot", "1", "--out", s(&link)], "symbolic link");
    assert_eq!(std::fs::read_to_string(&precious).unwrap(), "keep me");
    let dangling = lab.path("dangling.svg");
    std::os::unix::fs::symlink(outside.path().join("new.svg"), &dangling).unwrap();
    lab.refuses(&["plot", "1", "--out", s(&dangling)], "symbolic link");
    assert!(
        !outside.path().join("new.svg").exists(),
        "nothing created through a dangling link"
    );
    // --force overwrites, and follows the link the user chose to write through.
    lab.ok(&["plot", "1", "--out", s(&svg), "--force"]);
    assert!(std::fs::read_to_string(&svg).unwrap().starts_with("<svg"));
    lab.ok(&["plot", "1", "--out", s(&link), "--force"]);
    assert!(std::fs::read_to_string(&precious).unwrap().starts_with("<svg"));

    // export --out: one file already there refuses the whole export before anything is written.
    let dir = lab.path("si");
    std::fs::create_dir(&dir).unwrap();
    std::fs::write(dir.join("derived_values.csv"), "mine").unwrap();
    lab.refuses(&["export", "--format", "csv", "--out", s(&dir)], "already exists");
    assert!(
        !dir.join("batches.csv").exists() && !dir.join("aliquots.csv").exists(),
        "no partial export"
    );
    assert_eq!(std::fs::read_to_string(dir.join("derived_values.csv")).unwrap(), "mine");
    std::fs::remove_file(dir.join("derived_values.csv")).unwrap();
    std::fs::write(&precious, "keep me").unwrap();
    std::os::unix::fs::symlink(&precious, dir.join("batches.csv")).unwrap();
    lab.refuses(&["export", "--format", "csv", "--out", s(&dir)], "symbolic link");
    assert_eq!(std::fs::read_to_string(&precious).unwrap(), "keep me");
    assert!(!dir.join("aliquots.csv").exists(), "no partial export");
    lab.ok(&["export", "--format", "csv", "--out", s(&dir), "--force"]);
    assert!(std::fs::read_to_string(&precious).unwrap().starts_with("id,name"));
    // Exporting twice into one folder is refused the second time, JSON as CSV.
    let j = lab.path("js");
    lab.ok(&["export", "--format", "json", "--out", s(&j)]);
    lab.refuses(&["export", "--format", "json", "--out", s(&j)], "already exists");
    lab.ok(&["export", "--format", "json", "--out", s(&j), "--force"]);
}

#[test]
fn demo_keeps_a_demo_lab_that_holds_real_work_unless_forced() {
    let lab = Lab::new();
    lab.ok(&["demo", "--no-ui"]);
    // Reading, listing and searching a demo lab is not work: it can be rebuilt freely.
    lab.ok(&["batch", "list", "--json"]);
    lab.ok(&["find", "material CdSe"]);
    lab.ok(&["demo", "--no-ui"]);
    // One real aliquot logged into the demo lab.
    let f = lab.abs_file("mine.csv", 550.0);
    lab.ok(&["aliquot", "add", "1", "--abs", s(&f), "--minutes", "30"]);
    let before = std::fs::read(&lab.db).unwrap();
    let o = lab.run(&["demo", "--no-ui"]);
    assert_eq!(o.code, 1, "{}{}", o.stderr, o.stdout);
    assert!(
        o.stderr.contains("holds work logged after the demo was built"),
        "{}",
        o.stderr
    );
    assert!(
        o.stderr.contains("--force"),
        "the message says how to go on: {}",
        o.stderr
    );
    assert_eq!(o.stderr.trim().lines().count(), 1, "{}", o.stderr);
    assert_eq!(std::fs::read(&lab.db).unwrap(), before, "the lab is untouched");
    // A new batch counts as work too, and --force rebuilds.
    lab.ok(&["batch", "new", "--material", "CdSe", "--name", "real one"]);
    lab.refuses(&["demo", "--no-ui"], "holds work");
    let o = lab.ok(&["demo", "--no-ui", "--force"]);
    assert!(o.stdout.contains("built the demo lab"), "{}", o.stdout);
    let names = lab.ok(&["batch", "list", "--json"]).json();
    assert!(
        names.as_array().unwrap().iter().all(|b| b["name"] != "real one"),
        "rebuilt from scratch"
    );
    lab.ok(&["demo", "--no-ui"]);
}
