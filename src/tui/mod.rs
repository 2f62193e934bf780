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

/// Runs the UI on the store it is given until the user quits. The UI opens no connection of
/// its own: background jobs use siblings of this store (see `Store::sibling`).
pub fn run(store: Store) -> Result<()> {
    let keys = keys::KeyMap::load().map_err(Error::Invalid)?;
    if store.path.is_none() {
        return Err(Error::Invalid("the UI needs a database file".into()));
    }
    let mut app = app::App::new(store, keys);
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
