//! The bindings in force as people read them: the footer of each scope, the help overlay
//! grouped by scope, and the hints and titles that name the keys of a mode.

use super::{Action, KeyMap, SCOPES, Scope, describe};

impl KeyMap {
    /// (key, description) for the footer of a scope.
    pub fn footer(&self, scope: Scope) -> Vec<(String, &'static str)> {
        self.entries
            .iter()
            .filter(|(_, b)| b.footer && (b.scope == scope || b.scope == Scope::Everywhere))
            .map(|(k, b)| (describe(k), b.name))
            .collect()
    }

    /// (key, description) for the footer of a form or a confirmation: only that scope's keys.
    pub fn footer_in(&self, scope: Scope) -> Vec<(String, &'static str)> {
        self.entries
            .iter()
            .filter(|(_, b)| b.footer && b.scope == scope)
            .map(|(k, b)| (describe(k), b.name))
            .collect()
    }

    /// The key bound to an action in a scope, as the help writes it.
    pub fn key_for(&self, action: Action, scope: Scope) -> Option<String> {
        self.entries
            .iter()
            .find(|(_, b)| b.action == action && b.scope == scope)
            .map(|(k, _)| describe(k))
    }

    /// Every key bound to an action in a scope, as the help writes them, joined by `/`.
    fn keys_for(&self, action: Action, scope: Scope) -> String {
        let keys: Vec<String> = self
            .entries
            .iter()
            .filter(|(_, b)| b.action == action && b.scope == scope)
            .map(|(k, _)| describe(k))
            .collect();
        keys.join("/")
    }

    /// The footer while the search box is being typed in.
    pub fn search_footer(&self) -> String {
        format!(
            "type a query · {} leave the search box",
            self.keys_for(Action::LeaveSearch, Scope::Search)
        )
    }

    /// The help's title: which lines show of how many, and the keys that page and close it.
    pub fn help_title(&self, lines: Option<(usize, usize, usize)>) -> String {
        let more = match lines {
            Some((first, last, total)) => format!(
                " · lines {first}-{last} of {total}, {}/{} more, {}/{} back",
                self.keys_for(Action::HelpLineDown, Scope::Help),
                self.keys_for(Action::HelpPageDown, Scope::Help),
                self.keys_for(Action::HelpLineUp, Scope::Help),
                self.keys_for(Action::HelpPageUp, Scope::Help)
            ),
            None => String::new(),
        };
        format!(
            "keys{more} · {} or ? closes",
            self.keys_for(Action::HelpClose, Scope::Help)
        )
    }

    /// The picker's line while a path is typed.
    pub fn path_hint(&self) -> String {
        let k = |a| self.keys_for(a, Scope::PickerPath);
        format!(
            "{} completes · {} goes there · {} back to the list",
            k(Action::PathComplete),
            k(Action::PathGo),
            k(Action::PathStop)
        )
    }

    /// (scope title, key, help) for the help overlay, grouped by scope in [`SCOPES`] order.
    pub fn help(&self) -> Vec<(&'static str, String, &'static str)> {
        let mut out = Vec::new();
        for (scope, title) in SCOPES {
            for (k, b) in self.entries.iter().filter(|(_, b)| b.scope == *scope) {
                out.push((*title, describe(k), b.help));
            }
        }
        out
    }
}
