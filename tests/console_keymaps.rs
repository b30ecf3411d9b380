//! Keymaps: the bundled maps load and leave every action reachable; the valid corpus loads; every invalid
//! map gives its file, line and reason, and the console then falls back to the default keys.
#![allow(clippy::unwrap_used)] // a failed step in a test or benchmark should stop it loudly

use interloper::console::actions::Action;
use interloper::console::keymap::{Context, Keymap, load};
use std::path::PathBuf;

fn dir(p: &str) -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR")).join(p)
}

#[test]
fn bundled_maps_load_and_bind_every_list_action() {
    for name in ["default.toml", "home-row.toml", "left-hand.toml"] {
        let text = std::fs::read_to_string(dir("keymaps").join(name)).unwrap();
        let (map, err) = load(Some((name, &text)));
        assert!(err.is_none(), "{name}: {err:?}");
        for a in Action::ALL {
            if matches!(a, Action::Accept | Action::Cancel) {
                continue;
            }
            if matches!(a, Action::NextSite | Action::Units) {
                assert!(
                    !map.keys_for(Context::Overlay, a).is_empty(),
                    "{name}: nothing bound to {} over the panels",
                    a.name()
                );
                continue;
            }
            assert!(
                !map.keys_for(Context::List, a).is_empty(),
                "{name}: nothing bound to {}",
                a.name()
            );
        }
        assert!(!map.keys_for(Context::Input, Action::Accept).is_empty());
        assert!(!map.keys_for(Context::Overlay, Action::Cancel).is_empty());
    }
}

#[test]
fn a_user_map_overrides_the_default_key_by_key() {
    let text = std::fs::read_to_string(dir("tests/keymaps/valid/override_two.toml")).unwrap();
    let (map, err) = load(Some(("override_two.toml", &text)));
    assert!(err.is_none());
    assert_eq!(
        map.action(Context::List, &"J".parse().unwrap()),
        Some(Action::MoveDown)
    );
    assert_eq!(
        map.action(Context::List, &"j".parse().unwrap()),
        Some(Action::MoveDown),
        "defaults stay"
    );
    assert_eq!(
        map.action(Context::List, &"C-n".parse().unwrap()),
        Some(Action::NextUndecided)
    );
    let text = std::fs::read_to_string(dir("tests/keymaps/valid/function_keys.toml")).unwrap();
    assert!(load(Some(("f.toml", &text))).1.is_none());
}

#[test]
fn every_invalid_map_names_file_line_and_reason_and_falls_back() {
    let table = std::fs::read_to_string(dir("tests/keymaps/expected.tsv")).unwrap();
    let default = Keymap::builtin();
    for row in table.lines().skip(1) {
        let f: Vec<&str> = row.split('\t').collect();
        let text = std::fs::read_to_string(dir("tests/keymaps/invalid").join(f[0])).unwrap();
        let (map, err) = load(Some((f[0], &text)));
        let err = err.unwrap_or_else(|| panic!("{} loaded", f[0]));
        assert_eq!(err.file, f[0]);
        assert_eq!(err.line.to_string(), f[1], "{}: {err}", f[0]);
        assert!(err.reason.contains(f[2]), "{}: {err}", f[0]);
        assert_eq!(
            map.describe().len(),
            default.describe().len(),
            "{}: not the default map",
            f[0]
        );
    }
}
