//! Key bindings: a built-in map (keymaps/default.toml, compiled in) that a user's map overrides key by
//! key. A map is TOML with one table per context (`[list]` for the candidate list, `[input]` while typing,
//! `[overlay]` over help and other panels), each binding `"key" = "action"`. Keys are a character
//! (`"j"`, `"?"`), a name (`Up`, `PageDown`, `Enter`, `Esc`, `Tab`, `Space`, `Backspace`, `Home`, `End`,
//! `F1`…`F12`), optionally prefixed by `C-` (Control) or `A-` (Alt).

use super::actions::Action;
use ratatui::crossterm::event::{KeyCode, KeyEvent, KeyModifiers};
use std::collections::BTreeMap;

pub const DEFAULT_MAP: &str = include_str!("../../keymaps/default.toml");

#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub enum Context {
    List,
    Input,
    Overlay,
}

impl Context {
    fn from_name(s: &str) -> Option<Context> {
        match s {
            "list" => Some(Context::List),
            "input" => Some(Context::Input),
            "overlay" => Some(Context::Overlay),
            _ => None,
        }
    }
    pub fn name(self) -> &'static str {
        match self {
            Context::List => "list",
            Context::Input => "input",
            Context::Overlay => "overlay",
        }
    }
}

/// A key with modifiers, as bound.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub struct Key {
    pub code: KeyCodeOrd,
    pub ctrl: bool,
    pub alt: bool,
}

/// KeyCode made orderable for maps.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub enum KeyCodeOrd {
    Char(char),
    Named(&'static str),
    F(u8),
}

const NAMED: [&str; 13] = [
    "Up",
    "Down",
    "Left",
    "Right",
    "PageUp",
    "PageDown",
    "Home",
    "End",
    "Enter",
    "Esc",
    "Tab",
    "Backspace",
    "Delete",
];

impl std::str::FromStr for Key {
    type Err = String;
    fn from_str(s: &str) -> Result<Key, String> {
        let mut rest = s;
        let (mut ctrl, mut alt) = (false, false);
        loop {
            if let Some(r) = rest.strip_prefix("C-").filter(|r| !r.is_empty()) {
                ctrl = true;
                rest = r;
            } else if let Some(r) = rest.strip_prefix("A-").filter(|r| !r.is_empty()) {
                alt = true;
                rest = r;
            } else {
                break;
            }
        }
        let code = if rest == "Space" {
            KeyCodeOrd::Char(' ')
        } else if let Some(n) = NAMED.iter().find(|n| **n == rest) {
            KeyCodeOrd::Named(n)
        } else if let Some(f) = rest
            .strip_prefix('F')
            .and_then(|d| d.parse::<u8>().ok())
            .filter(|f| (1..=12).contains(f))
        {
            KeyCodeOrd::F(f)
        } else {
            let mut chars = rest.chars();
            match (chars.next(), chars.next()) {
                (Some(c), None) if !c.is_control() => KeyCodeOrd::Char(c),
                _ => {
                    return Err(format!(
                        "'{s}' is not a key (a character, or a name such as Up, PageDown, Enter, Esc, F1; C- and A- prefixes)"
                    ));
                }
            }
        };
        Ok(Key { code, ctrl, alt })
    }
}

impl Key {
    pub fn from_event(e: &KeyEvent) -> Option<Key> {
        let code = match e.code {
            KeyCode::Char(c) => KeyCodeOrd::Char(c),
            KeyCode::Up => KeyCodeOrd::Named("Up"),
            KeyCode::Down => KeyCodeOrd::Named("Down"),
            KeyCode::Left => KeyCodeOrd::Named("Left"),
            KeyCode::Right => KeyCodeOrd::Named("Right"),
            KeyCode::PageUp => KeyCodeOrd::Named("PageUp"),
            KeyCode::PageDown => KeyCodeOrd::Named("PageDown"),
            KeyCode::Home => KeyCodeOrd::Named("Home"),
            KeyCode::End => KeyCodeOrd::Named("End"),
            KeyCode::Enter => KeyCodeOrd::Named("Enter"),
            KeyCode::Esc => KeyCodeOrd::Named("Esc"),
            KeyCode::Tab => KeyCodeOrd::Named("Tab"),
            KeyCode::Backspace => KeyCodeOrd::Named("Backspace"),
            KeyCode::Delete => KeyCodeOrd::Named("Delete"),
            KeyCode::F(n) => KeyCodeOrd::F(n),
            _ => return None,
        };
        Some(Key {
            code,
            ctrl: e.modifiers.contains(KeyModifiers::CONTROL),
            alt: e.modifiers.contains(KeyModifiers::ALT),
        })
    }

    pub fn label(&self) -> String {
        let base = match self.code {
            KeyCodeOrd::Char(' ') => "Space".to_string(),
            KeyCodeOrd::Char(c) => c.to_string(),
            KeyCodeOrd::Named(n) => n.to_string(),
            KeyCodeOrd::F(n) => format!("F{n}"),
        };
        format!(
            "{}{}{base}",
            if self.ctrl { "C-" } else { "" },
            if self.alt { "A-" } else { "" }
        )
    }
}

/// A problem in a keymap file: where and why.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct KeymapError {
    pub file: String,
    pub line: usize,
    pub reason: String,
}

impl std::fmt::Display for KeymapError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(f, "{}: line {}: {}", self.file, self.line, self.reason)
    }
}

#[derive(Debug, Clone, Default)]
pub struct Keymap {
    bindings: BTreeMap<(Context, Key), Action>,
}

/// Line of the first `key =` inside `[section]` (for messages; TOML itself gives no spans here).
fn line_of(text: &str, section: &str, key: &str) -> usize {
    let mut in_section = false;
    for (k, l) in text.lines().enumerate() {
        let t = l.trim();
        if t.starts_with('[') {
            in_section = t.trim_matches(|c| c == '[' || c == ']').trim() == section;
            continue;
        }
        if in_section {
            let lhs = t
                .split('=')
                .next()
                .unwrap_or("")
                .trim()
                .trim_matches('"')
                .trim_matches('\'');
            if lhs == key {
                return k + 1;
            }
        }
    }
    0
}

impl Keymap {
    /// The built-in map.
    pub fn builtin() -> Keymap {
        let mut m = Keymap::default();
        // Checked by a test; an error here is a build defect, and the map is then empty but usable.
        let _ = m.overlay("<built-in keymap>", DEFAULT_MAP);
        m
    }

    /// Parse a map and lay it over this one, key by key. On error nothing is changed.
    pub fn overlay(&mut self, file: &str, text: &str) -> Result<usize, KeymapError> {
        let err = |line: usize, reason: String| KeymapError {
            file: file.to_string(),
            line,
            reason,
        };
        let doc: toml::Table = text.parse().map_err(|e: toml::de::Error| {
            let line = e.span().map_or(0, |s| {
                text[..s.start.min(text.len())].matches('\n').count() + 1
            });
            err(line, e.message().to_string())
        })?;
        let mut new: BTreeMap<(Context, Key), (Action, usize)> = BTreeMap::new();
        for (section, table) in &doc {
            let ctx = Context::from_name(section).ok_or_else(|| {
                err(
                    line_of(text, section, "").max(1),
                    format!("unknown context [{section}] (list, input, overlay)"),
                )
            })?;
            let table = table.as_table().ok_or_else(|| {
                err(
                    0,
                    format!("[{section}] must be a table of \"key\" = \"action\""),
                )
            })?;
            for (key_text, action) in table {
                let line = line_of(text, section, key_text);
                let key: Key = key_text.parse().map_err(|r| err(line, r))?;
                let name = action.as_str().ok_or_else(|| {
                    err(
                        line,
                        format!("the action for '{key_text}' must be a string"),
                    )
                })?;
                let action = Action::from_name(name)
                    .ok_or_else(|| err(line, format!("unknown action '{name}'")))?;
                if let Some((other, other_line)) = new.insert((ctx, key), (action, line)) {
                    // Report on the later of the two lines, naming the earlier one.
                    let ((a1, l1), (a2, l2)) = if other_line <= line {
                        ((other, other_line), (action, line))
                    } else {
                        ((action, line), (other, other_line))
                    };
                    return Err(err(
                        l2,
                        format!(
                            "key '{}' is bound twice in [{section}] (to '{}' on line {l1} and to '{}')",
                            key.label(),
                            a1.name(),
                            a2.name()
                        ),
                    ));
                }
            }
        }
        let n = new.len();
        for (k, (a, _)) in new {
            self.bindings.insert(k, a);
        }
        Ok(n)
    }

    pub fn action(&self, ctx: Context, key: &Key) -> Option<Action> {
        self.bindings.get(&(ctx, *key)).copied()
    }

    /// Keys bound to an action in a context, in key order.
    pub fn keys_for(&self, ctx: Context, action: Action) -> Vec<Key> {
        self.bindings
            .iter()
            .filter(|((c, _), a)| *c == ctx && **a == action)
            .map(|((_, k), _)| *k)
            .collect()
    }

    /// (context, action, keys) for every bound action, for the help overlay.
    pub fn describe(&self) -> Vec<(Context, Action, Vec<Key>)> {
        let mut out = Vec::new();
        for ctx in [Context::List, Context::Input, Context::Overlay] {
            for a in Action::ALL {
                let keys = self.keys_for(ctx, a);
                if !keys.is_empty() {
                    out.push((ctx, a, keys));
                }
            }
        }
        out
    }
}

/// The map to use: the built-in one, then the user's file over it. A bad user file leaves the built-in
/// map and returns the reason to show.
pub fn load(user: Option<(&str, &str)>) -> (Keymap, Option<KeymapError>) {
    let mut map = Keymap::builtin();
    if let Some((file, text)) = user
        && let Err(e) = map.overlay(file, text)
    {
        return (Keymap::builtin(), Some(e));
    }
    (map, None)
}
