//! The keyboard-driven terminal UI. `app` holds state and actions, `draw` renders it, `keys`
//! is the one key table behind dispatch, help and footer. The terminal is restored on every
//! way out, a panic included (ratatui's init installs the hook).

pub mod app;
pub mod draw;
pub mod keys;

use crate::error::{Error, Result};
use crate::store::Store;
use crossterm::event::{self, Event, KeyEventKind};
use std::time::Duration;

/// Runs the UI on an open store until the user quits.
pub fn run(store: &mut Store) -> Result<()> {
    let keys = keys::KeyMap::load().map_err(Error::Invalid)?;
    let path = store
        .path
        .clone()
        .ok_or_else(|| Error::Invalid("the UI needs a database file".into()))?;
    let own = Store::open(&path, &store.actor)?;
    let mut app = app::App::new(own, keys);
    let mut terminal = ratatui::try_init()?;
    let result = event_loop(&mut terminal, &mut app);
    ratatui::restore();
    result
}

fn event_loop(terminal: &mut ratatui::DefaultTerminal, app: &mut app::App) -> Result<()> {
    while !app.quit {
        app.poll_workers();
        terminal.draw(|f| draw::draw(f, app))?;
        if event::poll(Duration::from_millis(150))?
            && let Event::Key(k) = event::read()?
            && k.kind == KeyEventKind::Press
        {
            app.on_key(k);
        }
    }
    Ok(())
}
