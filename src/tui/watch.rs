//! Watching a folder for new exports while a batch grows: a worker thread looks at the folder
//! twice a second, logs each export once it has stopped changing (see `bench::FolderWatch`),
//! and says what it logged, with the first exciton, until the person stops it. The watch
//! never blocks the screen and never stops by itself; the status line shows it while it runs.

use super::worker::Note;
use crate::lab::bench::{self, WatchSetup};
use crate::store::Store;
use std::path::PathBuf;
use std::sync::Arc;
use std::sync::atomic::{AtomicBool, Ordering};
use std::sync::mpsc::Sender;
use std::time::{Duration, Instant};

/// A running watch, as the screen knows it.
#[derive(Debug, Clone)]
pub struct WatchRun {
    pub batch: i64,
    pub folder: PathBuf,
    pub logged: usize,
    pub started: Instant,
    stop: Arc<AtomicBool>,
}

impl WatchRun {
    /// Asks the worker to stop after the file it is on, if any.
    pub fn stop(&self) {
        self.stop.store(true, Ordering::Relaxed);
    }
    pub fn stopping(&self) -> bool {
        self.stop.load(Ordering::Relaxed)
    }
}

/// Reads an injection time as a person types it: `14:05` (today), `2026-06-12 14:05`,
/// `2026-06-12T14:05:30`, with an offset or in local time, or `now`. Blank is no time.
pub fn parse_injected(
    text: &str,
    now: chrono::DateTime<chrono::Local>,
) -> Result<Option<chrono::DateTime<chrono::FixedOffset>>, String> {
    use chrono::{NaiveDate, NaiveDateTime, NaiveTime, TimeZone};
    let t = text.trim();
    if t.is_empty() {
        return Ok(None);
    }
    if t.eq_ignore_ascii_case("now") {
        return Ok(Some(now.fixed_offset()));
    }
    if let Ok(d) = chrono::DateTime::parse_from_rfc3339(t) {
        return Ok(Some(d));
    }
    let local = |n: NaiveDateTime| {
        chrono::Local
            .from_local_datetime(&n)
            .earliest()
            .map(|d| d.fixed_offset())
            .ok_or_else(|| format!("injected at: {t} does not exist in local time (a clock change)"))
    };
    for f in [
        "%Y-%m-%d %H:%M:%S",
        "%Y-%m-%d %H:%M",
        "%Y-%m-%dT%H:%M:%S",
        "%Y-%m-%dT%H:%M",
    ] {
        if let Ok(n) = NaiveDateTime::parse_from_str(t, f) {
            return local(n).map(Some);
        }
    }
    for f in ["%H:%M:%S", "%H:%M"] {
        if let Ok(time) = NaiveTime::parse_from_str(t, f) {
            let day: NaiveDate = now.date_naive();
            let at = local(day.and_time(time))?;
            if at > now.fixed_offset() {
                return Err(format!(
                    "injected at: {t} today is still to come; give the date too (2026-06-12 {t})"
                ));
            }
            return Ok(Some(at));
        }
    }
    Err(format!(
        "injected at: '{t}' is not a time (14:05, 2026-06-12 14:05 or now)"
    ))
}

/// Starts the worker. The files in the folder now are left alone: only exports that arrive
/// from here on are logged.
pub fn start(mut store: Store, setup: WatchSetup, tx: Sender<Note>) -> WatchRun {
    let stop = Arc::new(AtomicBool::new(false));
    let run = WatchRun {
        batch: setup.batch,
        folder: setup.folder.clone(),
        logged: 0,
        started: Instant::now(),
        stop: stop.clone(),
    };
    let mut watch = bench::FolderWatch::new(&bench::folder_looks(&setup.folder));
    std::thread::spawn(move || {
        let mut logged = std::collections::HashMap::new();
        let mut count = 0usize;
        let say = |s: String, logged: bool| {
            let _ = tx.send(Note::Watched(s, logged));
        };
        while !stop.load(Ordering::Relaxed) {
            std::thread::sleep(Duration::from_millis(250));
            if !setup.folder.is_dir() {
                let _ = tx.send(Note::WatchEnded(format!(
                    "stopped watching: {} is gone; {count} exports logged",
                    setup.folder.display()
                )));
                return;
            }
            let listing = bench::folder_looks(&setup.folder);
            for ev in watch.look(Instant::now(), &listing) {
                let p = match ev {
                    bench::WatchEvent::ChangedAfter(p, Some(aliquot)) => {
                        say(
                            format!(
                                "{} changed after it was logged into aliquot {aliquot}; void that aliquot and log the file again",
                                p.display()
                            ),
                            false,
                        );
                        continue;
                    }
                    bench::WatchEvent::ChangedAfter(_, None) => continue,
                    bench::WatchEvent::Ready(p) => p,
                };
                let Some(look) = listing.iter().find(|(q, _)| *q == p).map(|(_, l)| *l) else {
                    continue;
                };
                let mut r = bench::log_watched_file(&mut store, &setup, &p, look.modified, &mut logged);
                // The lab was restored while watching: go on watching into the restored lab.
                if let Err(crate::Error::Replaced { .. }) = &r
                    && let Ok(fresh) = crate::lab::reopen(&store)
                {
                    store = fresh;
                    say("the lab was restored from a backup; watching on into it".into(), false);
                    r = bench::log_watched_file(&mut store, &setup, &p, look.modified, &mut logged);
                }
                match r {
                    Ok(l) => {
                        count += 1;
                        watch.done(&p, look, Some(l.summary.id));
                        say(announce(&l), true);
                    }
                    Err(e) => {
                        watch.done(&p, look, None);
                        say(format!("not logged: {e}"), false);
                    }
                }
            }
        }
        let _ = tx.send(Note::WatchEnded(format!(
            "stopped watching {}; {count} exports logged",
            setup.folder.display()
        )));
    });
    run
}

fn num(v: Option<f64>, d: usize) -> String {
    v.map(|x| format!("{x:.d$}")).unwrap_or_else(|| "-".into())
}

/// The line that tells the person what a watched export became: the file and its numbers
/// first, as the status line may be narrow.
pub fn announce(l: &bench::WatchLogged) -> String {
    let s = &l.summary;
    let what = if l.kind == "pl" {
        format!(
            "PL peak {} nm, QY {}",
            num(s.pl_peak_nm, 1),
            s.qy.map(|q| format!("{:.0} %", q * 100.0))
                .unwrap_or_else(|| "-".into())
        )
    } else {
        format!(
            "first exciton {} nm, D {} nm",
            num(s.first_exciton_nm, 1),
            num(s.diameter_nm, 2)
        )
    };
    let into = if l.joined { "joins aliquot" } else { "aliquot" };
    format!(
        "{}: {what} → {into} {} at {} min",
        l.file,
        s.id,
        super::units::minutes(l.minutes)
    )
}

#[cfg(test)]
mod tests {
    #![allow(clippy::unwrap_used)]
    use super::*;
    use chrono::TimeZone;

    #[test]
    fn injection_times_as_typed() {
        let now = chrono::Local.with_ymd_and_hms(2026, 6, 12, 15, 0, 0).unwrap();
        let at = parse_injected("14:05", now).unwrap().unwrap();
        assert_eq!((now.fixed_offset() - at).num_minutes(), 55);
        let at = parse_injected("2026-06-11 23:30", now).unwrap().unwrap();
        assert_eq!((now.fixed_offset() - at).num_minutes(), 15 * 60 + 30);
        assert_eq!(parse_injected("", now).unwrap(), None);
        assert_eq!(parse_injected("now", now).unwrap().unwrap(), now.fixed_offset());
        assert!(parse_injected("16:00", now).unwrap_err().contains("still to come"));
        assert!(parse_injected("teatime", now).unwrap_err().contains("not a time"));
    }
}
