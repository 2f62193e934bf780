//! The bindings in force (the shipped table with the user's overrides, a conflicting one
//! refused with both names) and the action a key press asks for in a scope.

use super::{Action, Binding, DEFAULT_KEYS, Key, Scope, describe, parse_key, read_overrides};
use crossterm::event::{KeyCode, KeyEvent, KeyModifiers};
use std::collections::BTreeMap;

/// The bindings in force: defaults with the user's overrides.
pub struct KeyMap {
    pub entries: Vec<(Key, &'static Binding)>,
}

impl KeyMap {
    pub fn new(overrides: &BTreeMap<String, String>) -> Result<KeyMap, String> {
        let mut entries = Vec::new();
        for b in DEFAULT_KEYS {
            let text = overrides.get(b.name).map(String::as_str).unwrap_or(b.key);
            let key = parse_key(text).ok_or_else(|| format!("keys: '{text}' for {} is not a key", b.name))?;
            entries.push((key, b));
        }
        for name in overrides.keys() {
            if !DEFAULT_KEYS.iter().any(|b| b.name == name) {
                return Err(format!("keys: no action called '{name}'"));
            }
        }
        // Two actions of one mode on one key: only one could ever be reached. The shipped
        // table has no such pair, so it is a rebinding that made it.
        for (i, (ka, a)) in entries.iter().enumerate() {
            for (kb, b) in &entries[i + 1..] {
                if ka == kb && a.scope.meets(b.scope) && a.action != b.action {
                    let (rebound, other) = if overrides.contains_key(a.name) { (a, b) } else { (b, a) };
                    let narrow = if rebound.scope == Scope::Everywhere {
                        other.scope
                    } else {
                        rebound.scope
                    };
                    return Err(format!(
                        "keys: {} and {} would both be {} ({}); give one of them another key",
                        rebound.name,
                        other.name,
                        describe(ka),
                        narrow.title()
                    ));
                }
            }
        }
        Ok(KeyMap { entries })
    }

    /// Reads the user's override file, if there is one.
    pub fn load() -> Result<KeyMap, String> {
        match crate::paths::keys_file() {
            Some(p) if p.exists() => KeyMap::from_file(&p),
            _ => KeyMap::new(&BTreeMap::new()),
        }
    }

    /// The shipped keys with the overrides of one file (what [`KeyMap::load`] reads).
    pub fn from_file(p: &std::path::Path) -> Result<KeyMap, String> {
        KeyMap::new(&read_overrides(p)?)
    }

    /// The action a key press asks for in a scope.
    pub fn action(&self, ev: &KeyEvent, scope: Scope) -> Option<Action> {
        let ctrl = ev.modifiers.contains(KeyModifiers::CONTROL);
        let code = match ev.code {
            KeyCode::Char('k') if !ctrl && !self.bound(KeyCode::Char('k'), scope) => KeyCode::Up,
            KeyCode::Char('j') if !ctrl && !self.bound(KeyCode::Char('j'), scope) => KeyCode::Down,
            c => c,
        };
        let want = Key { code, ctrl };
        self.entries
            .iter()
            .find(|(k, b)| *k == want && (b.scope == scope || b.scope == Scope::Everywhere))
            .map(|(_, b)| b.action)
    }

    /// The action a key asks for in exactly this scope: no keys of other scopes, no j/k
    /// aliases. Forms, text fields and confirmations use it, so a letter meant as text never
    /// reaches a view's binding.
    pub fn action_in(&self, ev: &KeyEvent, scope: Scope) -> Option<Action> {
        let ctrl = ev.modifiers.contains(KeyModifiers::CONTROL);
        let want = Key { code: ev.code, ctrl };
        self.entries
            .iter()
            .find(|(k, b)| *k == want && b.scope == scope)
            .map(|(_, b)| b.action)
    }

    fn bound(&self, code: KeyCode, scope: Scope) -> bool {
        self.entries
            .iter()
            .any(|(k, b)| k.code == code && !k.ctrl && (b.scope == scope || b.scope == Scope::Everywhere))
    }
}
