//! Tests of the watch's settling (a file is read only once its look has held) and of the
//! minutes read from names and headers.

use super::{FileLook, FolderWatch, WATCH_SETTLE, WatchEvent, minutes_in};
use std::path::PathBuf;
use std::time::{Duration, Instant};

fn look(size: u64) -> FileLook {
    FileLook { size, modified: None }
}

/// A file written in bursts with pauses is read only after it has held still for the settle
/// time, and a change after reading is reported (the case of an export logged half-written).
#[test]
fn a_file_written_in_bursts_is_read_whole_and_a_late_change_reported() {
    let p = PathBuf::from("abs_18min.csv");
    let old = PathBuf::from("abs_00min.csv");
    let t0 = Instant::now();
    let mut w = FolderWatch::new(&[(old.clone(), look(10))]);
    assert!(
        w.look(t0, &[(old.clone(), look(10)), (p.clone(), look(100))])
            .is_empty()
    );
    // A pause shorter than the settle time, then more bytes.
    assert!(
        w.look(t0 + Duration::from_millis(1500), &[(p.clone(), look(100))])
            .is_empty()
    );
    assert!(
        w.look(t0 + Duration::from_millis(2000), &[(p.clone(), look(200))])
            .is_empty()
    );
    assert!(
        w.look(t0 + Duration::from_millis(4000), &[(p.clone(), look(200))])
            .is_empty()
    );
    let ready = w.look(
        t0 + Duration::from_millis(2000) + WATCH_SETTLE,
        &[(p.clone(), look(200))],
    );
    assert_eq!(ready, vec![WatchEvent::Ready(p.clone())]);
    w.done(&p, look(200), Some(7));
    assert!(
        w.look(t0 + Duration::from_secs(10), &[(p.clone(), look(200))])
            .is_empty()
    );
    assert_eq!(
        w.look(t0 + Duration::from_secs(11), &[(p.clone(), look(300))]),
        vec![WatchEvent::ChangedAfter(p.clone(), Some(7))]
    );
    // Reported once, not on every look.
    assert!(
        w.look(t0 + Duration::from_secs(12), &[(p.clone(), look(300))])
            .is_empty()
    );
    // A file there before watching began is left alone.
    assert!(w.look(t0 + Duration::from_secs(20), &[(old, look(10))]).is_empty());
}

#[test]
fn minutes_from_column_headers() {
    use super::minutes_in_header as m;
    assert_eq!(m("20 s"), Some(20.0 / 60.0));
    assert_eq!(m("40s"), Some(40.0 / 60.0));
    assert_eq!(m("1.5 min"), Some(1.5));
    assert_eq!(m("t = 5 min"), Some(5.0));
    assert_eq!(m("10 minutes"), Some(10.0));
    assert_eq!(m("2 h"), Some(120.0));
    assert_eq!(m("sample A"), None);
    assert_eq!(m("12"), None);
    assert_eq!(m("Absorbance"), None);
}

#[test]
fn minutes_from_names() {
    assert_eq!(minutes_in("abs_05min"), Some(5.0));
    assert_eq!(minutes_in("b12_pl_t2p5"), Some(12.0));
    assert_eq!(minutes_in("abs-0.5min"), Some(0.5));
    assert_eq!(minutes_in("abs"), None);
}
