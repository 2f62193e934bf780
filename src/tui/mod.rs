//! The keyboard-driven terminal UI. `app` holds the state and dispatches keys by mode,
//! `lists` filters, sorts and steps through the lists in memory, `actions` is what a view's
//! keys do, `forms` the forms, their keys and confirmations, `submit` what a saved form does;
//! `worker` is the UI's worker (every read and write of the lab, off the UI thread), `jobs`
//! what its requests do and the long jobs, `replies` what the answers do to the screen;
//! `draw` renders it all, `keys` is the one key table behind dispatch, help and footer,
//! `shelf` arranges the shelf (query, grouping, sort), `units` rounds numbers for people. The
//! terminal is restored on every way out, a panic included (ratatui's init installs the hook).

mod actions;
pub mod app;
pub mod draw;
pub mod forms;
pub mod jobs;
pub mod keys;
mod lists;
pub mod picker;
mod replies;
pub mod shelf;
mod submit;
pub mod units;
pub mod watch;
pub mod worker;

use crate::error::{Error, Result};
use crate::store::Store;
use crossterm::event::{self, DisableBracketedPaste, EnableBracketedPaste, Event, KeyEventKind};
use std::time::Duration;

/// Remembers a writer's name for this account: where it was kept, or why it could not be.
pub type RememberName = fn(&str) -> std::result::Result<String, String>;

/// How the person running the UI came to be the writer, from the face that opened it.
#[derive(Clone, Copy, Default)]
pub struct Writer {
    /// The name was chosen (`--as`, `$CUVETTE_USER`, a remembered name), not only the login
    /// name: the first-run form then adds that person without signing writes differently.
    pub chosen: bool,
    /// Remembers a name for this account (the first-run form's name, when `chosen` is false);
    /// says where, or why it could not.
    pub remember: Option<RememberName>,
}

/// Runs the UI on the store it is given until the user quits. The UI opens no connection of
/// its own: background jobs use siblings of this store (see `Store::sibling`).
pub fn run(store: Store, writer: Writer) -> Result<()> {
    let keys = keys::KeyMap::load().map_err(Error::Invalid)?;
    if store.path.is_none() {
        return Err(Error::Invalid("the UI needs a database file".into()));
    }
    let mut app = app::App::new(store, keys);
    app.writer = writer;
    // A person types as the screen changes under them: letters typed as a form closes are
    // held back rather than taken as the view's keys.
    app.settle = app::SETTLE;
    app.offer_first_run();
    let mut terminal = ratatui::try_init()?;
    // Pasted text arrives whole, so a newline in it cannot submit a form and spill the rest
    // of the paste into the view as keys. A terminal without bracketed paste simply ignores it.
    let _ = crossterm::execute!(std::io::stdout(), EnableBracketedPaste);
    let result = event_loop(&mut terminal, &mut app);
    // A watch ends with the UI: it stops between files, never inside a transaction.
    if let Some(w) = &app.watching {
        w.stop();
    }
    let _ = crossterm::execute!(std::io::stdout(), DisableBracketedPaste);
    ratatui::restore();
    // Saves still queued are finished, not dropped, as the app closes: say why it waits.
    app.drain_notes();
    if app.saves_waiting() > 0 {
        eprintln!("cuvette: finishing the saves still waiting for the lab…");
    }
    drop(app);
    result
}

fn event_loop(terminal: &mut ratatui::DefaultTerminal, app: &mut app::App) -> Result<()> {
    while !app.quit {
        app.poll_workers();
        if let Ok(s) = terminal.size() {
            app.size = (s.width, s.height);
        }
        terminal.draw(|f| draw::draw(f, app))?;
        // While the worker has a request out, look for its answer often, so it is on screen as
        // soon as it comes; otherwise keys are all there is to wait for.
        let wait = if app.waiting() { 15 } else { 150 };
        if event::poll(Duration::from_millis(wait))? {
            let asked = app.requests_made();
            match event::read()? {
                Event::Key(k) if k.kind == KeyEventKind::Press => app.on_key(k),
                Event::Paste(text) => app.on_paste(&text),
                _ => {}
            }
            // What a key asked, when it comes quickly (a sheet opened, a vial drawn), is drawn
            // in the very next frame; a slow answer (a write waiting for the lab) shows as
            // "working…" meanwhile, and the wait for it is never more than this.
            if app.requests_made() != asked {
                app.settle_workers(Duration::from_millis(20));
            }
        }
    }
    Ok(())
}
