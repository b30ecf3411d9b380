use super::*;
use crate::fitting::obsid::ObsId;
use std::fs::OpenOptions;

fn decision(object: &str, verdict: Verdict) -> Entry {
    Entry {
        note: Some("bright, moving fast".into()),
        n_obs: 12,
        obs_digest: "00".into(),
        ..Entry::decision(object, verdict, "2027-02-26T03:00:00Z".into())
    }
}

fn obs(k: i64) -> ObsId {
    format!("{}/1/2/F51", 246_109_800_000_000 + k * 100_000)
        .parse()
        .unwrap()
}

fn toggle(object: &str, kind: Kind, k: i64) -> Entry {
    Entry {
        obs: Some(obs(k)),
        ..Entry::new(kind, object, "2027-02-26T03:00:00Z".into())
    }
}

#[test]
fn decisions_survive_a_restart_and_undo_brings_back_the_one_before() {
    let dir = tempfile::tempdir().unwrap();
    {
        let (mut j, r) = Journal::open(dir.path()).unwrap();
        assert!(r.entries.is_empty());
        j.append(decision("A", Verdict::KeepWatching)).unwrap();
        j.append(decision("A", Verdict::Pursue)).unwrap();
        j.append(decision("A", Verdict::Undo)).unwrap();
        j.append(decision("B", Verdict::SetAside)).unwrap();
        j.append(decision("B", Verdict::Undo)).unwrap();
    }
    let (_, r) = Journal::open(dir.path()).unwrap();
    assert_eq!(r.entries.len(), 5);
    let s = r.standing();
    let a = s.get("A").and_then(ObjectState::standing).unwrap();
    assert_eq!(a.verdict, Some(Verdict::KeepWatching));
    assert!(s.get("B").unwrap().standing().is_none());
}

#[test]
fn excluding_k_then_another_then_restoring_k_leaves_exactly_the_other_excluded() {
    let dir = tempfile::tempdir().unwrap();
    {
        let (mut j, _) = Journal::open(dir.path()).unwrap();
        j.append(toggle("A", Kind::Exclude, 3)).unwrap();
        j.append(toggle("A", Kind::Exclude, 7)).unwrap();
        j.append(toggle("B", Kind::Exclude, 3)).unwrap();
        j.append(toggle("A", Kind::Restore, 3)).unwrap();
        j.append(Entry {
            method: Some(crate::fitting::fit::MethodChoice::Ranging),
            ..Entry::new(Kind::Method, "A", "2027-02-26T03:00:00Z".into())
        })
        .unwrap();
    }
    let (_, r) = Journal::open(dir.path()).unwrap();
    let s = r.standing();
    let a = s.get("A").unwrap();
    assert_eq!(a.excluded.iter().cloned().collect::<Vec<_>>(), [obs(7)]);
    assert_eq!(a.method, crate::fitting::fit::MethodChoice::Ranging);
    assert_eq!(
        s.get("B")
            .unwrap()
            .excluded
            .iter()
            .cloned()
            .collect::<Vec<_>>(),
        [obs(3)]
    );
}

#[test]
fn a_torn_last_line_is_skipped_with_a_warning_and_later_appends_stay_whole() {
    let dir = tempfile::tempdir().unwrap();
    {
        let (mut j, _) = Journal::open(dir.path()).unwrap();
        j.append(decision("A", Verdict::Pursue)).unwrap();
    }
    let path = dir.path().join(Journal::FILE_NAME);
    let mut f = OpenOptions::new().append(true).open(&path).unwrap();
    f.write_all(b"{\"seq\":2,\"time_utc\":\"2027-02-26T03:0")
        .unwrap();
    drop(f);
    let (mut j, r) = Journal::open(dir.path()).unwrap();
    assert_eq!(r.entries.len(), 1);
    assert_eq!(r.warnings.len(), 1, "{:?}", r.warnings);
    j.append(decision("C", Verdict::SetAside)).unwrap();
    let (_, r) = Journal::open(dir.path()).unwrap();
    assert_eq!(r.entries.len(), 2);
    assert_eq!(r.entries[1].object, "C");
}

#[test]
fn two_writers_on_one_journal_number_in_file_order_and_each_follows_the_other() {
    let dir = tempfile::tempdir().unwrap();
    let (mut a, _) = Journal::open_as(dir.path(), "alice").unwrap();
    let (mut b, _) = Journal::open_as(dir.path(), "bob").unwrap();
    let (mut seen_a, mut seen_b) = (Standing::default(), Standing::default());
    for k in 0..20 {
        let (w, v) = if k % 3 == 0 {
            (&mut b, Verdict::SetAside)
        } else {
            (&mut a, Verdict::Pursue)
        };
        w.append(decision(&format!("K{}", k % 4), v)).unwrap();
        for e in a.read_new().unwrap().entries {
            seen_a.apply(&e);
        }
        if k % 5 == 4 {
            for e in b.read_new().unwrap().entries {
                seen_b.apply(&e);
            }
        }
    }
    for e in b.read_new().unwrap().entries {
        seen_b.apply(&e);
    }
    let (_, r) = Journal::open(dir.path()).unwrap();
    let seqs: Vec<u64> = r.entries.iter().map(|e| e.seq).collect();
    assert_eq!(seqs, (1..=20).collect::<Vec<_>>());
    assert_eq!(r.entries[0].observer(), "bob");
    assert_eq!(r.entries[1].observer(), "alice");
    assert_eq!(seen_a, r.standing());
    assert_eq!(seen_b, r.standing());
}

#[test]
fn observer_names_are_cleaned_and_never_empty() {
    assert_eq!(observer_name(Some("night owl")), "night_owl");
    assert!(!observer_name(Some("\u{1b}[2Jx")).contains('\u{1b}'));
    assert_eq!(observer_name(Some("  ")), UNKNOWN_OBSERVER);
}
