//! What the observer changes at the console goes through the journal and comes back the same way
//! live and after a restart: `Space` toggles the observation under the cursor also after an earlier
//! exclusion and refit; random sequences of decisions, notes, exclusions, restorations, forced
//! methods and undos give the same state live as replayed from the journal.
#![allow(clippy::unwrap_used)] // a failed step in a test or benchmark should stop it loudly

use interloper::console::actions::Action;
use interloper::console::keymap::Keymap;
use interloper::console::state::{App, Effect};
use interloper::feed::journal::Journal;
use interloper::feed::sites::SiteTable;
use interloper::feed::tracklets::{Limits, merge, read_bytes};
use interloper::fitting::batch::fit_all;
use interloper::fitting::fit::FitOptions;
use interloper::fitting::input::Tracklet;
use interloper::fitting::obsid::ObsId;
use interloper::fitting::ranging::SplitMix;
use ratatui::crossterm::event::{KeyCode, KeyEvent, KeyModifiers};
use std::path::PathBuf;

/// Two demo objects, merged over their nights.
fn tracklets() -> Vec<Tracklet> {
    let root = PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("sample_feeds/demo_night");
    let mut all = Vec::new();
    for e in std::fs::read_dir(&root).unwrap() {
        let p = e.unwrap().path();
        let name = p.file_name().unwrap().to_string_lossy().to_string();
        if name.contains("qk0f3ra") || name.contains("qka2e7f") {
            let bytes = std::fs::read(&p).unwrap();
            let intake = read_bytes(&name, &bytes, &SiteTable::builtin(), &Limits::default());
            all.extend(intake.tracklets);
        }
    }
    merge(all)
}

fn app_with(fits: &[interloper::fitting::fit::FitResult]) -> App {
    let mut app = App::new(Keymap::builtin());
    app.me = "tester".into();
    for f in fits {
        app.on_fit(1, f.clone(), f.n_obs);
    }
    app
}

/// Carry out an action's journal lines the way the runtime does: write, read back, apply. Refits are
/// returned for the caller to do (or not).
fn run(app: &mut App, j: &mut Journal, effects: Vec<Effect>) -> Vec<Effect> {
    let mut refits = Vec::new();
    for eff in effects {
        if let Effect::Journal(e) = eff {
            let saved = j.append(e).unwrap();
            for e in j.read_new().unwrap().entries {
                refits.extend(app.on_entry(&e));
            }
            refits.extend(app.on_saved(&saved));
        }
    }
    refits
}

/// Regression: an export asked for while a decision was still on its way to the journal left the
/// decision out (the list's state is the fold of the journal, which had not read it back yet).
#[test]
fn an_export_pressed_while_a_decision_is_saving_waits_and_carries_the_decision() {
    let fits = fit_all(tracklets(), &FitOptions::default(), 2);
    let dir = tempfile::tempdir().unwrap();
    let (mut j, _) = Journal::open_as(dir.path(), "tester").unwrap();
    let mut app = app_with(&fits);
    let object = app.selected.clone().unwrap();
    let decided = app.act(Action::Pursue);
    assert!(
        app.act(Action::Export).is_empty(),
        "no export before the save"
    );
    assert!(app.message.as_deref().unwrap().contains("waits"));
    let exports = run(&mut app, &mut j, decided);
    let [Effect::Export(rows)] = exports.as_slice() else {
        panic!("one export once saved, got {exports:?}");
    };
    let row = rows.iter().find(|r| r.object == object).unwrap();
    assert_eq!(row.decision.as_deref(), Some("pursue"));
    assert!(
        app.act(Action::Export).len() == 1,
        "with nothing saving it exports at once"
    );
}

#[test]
fn two_decisions_in_flight_are_both_awaited_and_the_export_keeps_the_order_shown_at_the_key() {
    let fits = fit_all(tracklets(), &FitOptions::default(), 2);
    let dir = tempfile::tempdir().unwrap();
    let (mut j, _) = Journal::open_as(dir.path(), "tester").unwrap();
    let mut app = app_with(&fits);
    let object = app.selected.clone().unwrap();
    let first = app.act(Action::Pursue);
    let second = app.act(Action::SetAside);
    let shown: Vec<String> = app
        .view
        .iter()
        .map(|&i| app.candidates[i].fit.object.clone())
        .collect();
    assert!(app.act(Action::Export).is_empty());
    // The list is reversed before the saves land; the export keeps the order of the key press.
    let _ = app.act(Action::SortReverse);
    // Regression: the first confirmation cleared a yes/no "saving" flag and the export went out with
    // the first verdict while the second was still on its way.
    assert!(
        run(&mut app, &mut j, first).is_empty(),
        "one line is still saving"
    );
    let exports = run(&mut app, &mut j, second);
    let [Effect::Export(rows)] = exports.as_slice() else {
        panic!("one export once both are saved, got {exports:?}");
    };
    let order: Vec<&str> = rows.iter().map(|r| r.object.as_str()).collect();
    assert_eq!(order, shown);
    let row = rows.iter().find(|r| r.object == object).unwrap();
    assert_eq!(row.decision.as_deref(), Some("set aside"));
}

#[test]
fn a_failed_save_cancels_the_export_waiting_for_it_and_says_so() {
    let fits = fit_all(tracklets(), &FitOptions::default(), 2);
    let mut app = app_with(&fits);
    let object = app.selected.clone().unwrap();
    let _ = app.act(Action::Pursue);
    assert!(app.act(Action::Export).is_empty());
    app.on_save_failed(&object, "No space left on device");
    let m = app.message.clone().unwrap();
    assert!(m.contains("NOT SAVED") && m.contains("export"), "{m}");
    assert!(app.export_waiting.is_none());
}

fn excluded(app: &App) -> Vec<ObsId> {
    let c = app.selected_candidate().unwrap();
    c.overrides.excluded.iter().cloned().collect()
}

#[test]
fn space_after_an_exclusion_and_its_refit_toggles_the_observation_under_the_cursor() {
    let trs = tracklets();
    let opts = FitOptions::default();
    let fits = fit_all(trs.clone(), &opts, 2);
    let dir = tempfile::tempdir().unwrap();
    let (mut j, _) = Journal::open_as(dir.path(), "tester").unwrap();
    let mut app = app_with(&fits);
    let object = app.selected.clone().unwrap();
    let ids: Vec<ObsId> = app
        .observation_rows()
        .iter()
        .map(|r| r.id.clone())
        .collect();
    assert!(ids.len() >= 8);
    let mut toggle = |app: &mut App, k: usize| {
        app.obs_cursor = k;
        let effects = app.act(Action::ToggleObs);
        for r in run(app, &mut j, effects) {
            // The refit the runtime would start: the tracklet without the excluded observations.
            let Effect::Refit { overrides, .. } = r else {
                continue;
            };
            let mut t = trs.iter().find(|t| t.object == object).unwrap().clone();
            t.obs
                .retain(|o| !overrides.excluded.contains(&ObsId::of(o)));
            let t = Tracklet::new(t.object, t.source, t.obs);
            let fit = fit_all(vec![t], &opts, 1).remove(0);
            let n = ids.len();
            app.on_fit(2, fit, n);
        }
    };
    toggle(&mut app, 2);
    assert_eq!(excluded(&app), [ids[2].clone()]);
    // After the refit the rows are still every observation in time order, the excluded one in place.
    let rows = app.observation_rows();
    assert_eq!(rows.iter().map(|r| r.id.clone()).collect::<Vec<_>>(), ids);
    assert!(rows[2].excluded && rows[2].residual.is_none());
    toggle(&mut app, 5);
    assert_eq!(excluded(&app), [ids[2].clone(), ids[5].clone()]);
    toggle(&mut app, 2);
    assert_eq!(excluded(&app), [ids[5].clone()]);
    // And a restart re-applies exactly that exclusion.
    let (_, replay) = Journal::open(dir.path()).unwrap();
    let fresh = {
        let mut a = app_with(&fits);
        for e in &replay.entries {
            a.on_entry(e);
        }
        a.selected = Some(object.clone());
        a
    };
    assert_eq!(excluded(&fresh), [ids[5].clone()]);
}

fn random_action(rng: &mut SplitMix) -> Action {
    const ACTIONS: [Action; 10] = [
        Action::Pursue,
        Action::SetAside,
        Action::KeepWatching,
        Action::Undo,
        Action::Note,
        Action::ToggleObs,
        Action::ToggleObs,
        Action::ForceRanging,
        Action::ForcePerturbations,
        Action::MoveDown,
    ];
    ACTIONS[((rng.uniform() * ACTIONS.len() as f64) as usize).min(ACTIONS.len() - 1)]
}

#[test]
fn random_changes_give_the_same_state_live_and_replayed_from_the_journal() {
    let fits = fit_all(tracklets(), &FitOptions::default(), 2);
    let mut rng = SplitMix::new(7);
    for round in 0..25 {
        let dir = tempfile::tempdir().unwrap();
        let (mut j, _) = Journal::open_as(dir.path(), "tester").unwrap();
        let mut live = app_with(&fits);
        for step in 0..60 {
            let a = random_action(&mut rng);
            if a == Action::MoveDown && live.selected_row() == Some(live.view.len() - 1) {
                live.act(Action::First);
                continue;
            }
            live.obs_cursor = (rng.uniform() * 12.0) as usize;
            let mut effects = live.act(a);
            if a == Action::Note {
                live.input = tui_input::Input::new(format!("note {round}.{step}"));
                effects = live.on_key(KeyEvent::new(KeyCode::Enter, KeyModifiers::NONE));
            }
            run(&mut live, &mut j, effects);
        }
        let (_, replay) = Journal::open(dir.path()).unwrap();
        let mut replayed = app_with(&fits);
        for e in &replay.entries {
            replayed.on_entry(e);
        }
        assert!(replay.entries.len() >= 30, "round {round}: few lines");
        assert_eq!(live.standing, replayed.standing, "round {round}");
        for (a, b) in live.candidates.iter().zip(&replayed.candidates) {
            assert_eq!(a.decision, b.decision, "round {round}: {}", a.fit.object);
            assert_eq!(a.overrides, b.overrides, "round {round}: {}", a.fit.object);
        }
    }
}
