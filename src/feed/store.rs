//! Everything taken in so far: observations per object, merged across files with duplicates removed,
//! and the versions that tell which fit is the newest.

use super::InputError;
use super::sites::SiteTable;
use super::tracklets::{Limits, read_bytes};
use crate::fitting::input::{Observation, Tracklet};
use crate::fitting::obsid::ObsId;
use std::collections::{BTreeMap, BTreeSet, HashMap, HashSet};

/// One object's observations, each with the files that report it.
#[derive(Debug, Default)]
struct Entry {
    obs: BTreeMap<ObsId, (Observation, BTreeSet<String>)>,
    sources: Vec<String>,
    version: u64,
}

/// What one file changed.
#[derive(Debug, Default)]
pub struct Ingest {
    /// Objects whose observations changed, with their new version.
    pub changed: Vec<(String, u64)>,
    pub new_observations: usize,
    /// Observations that left because the file that reported them was rewritten without them.
    pub withdrawn_observations: usize,
    pub errors: Vec<InputError>,
    pub rejected: bool,
}

#[derive(Debug, Default)]
pub struct Store {
    objects: BTreeMap<String, Entry>,
    /// What each file's latest version contributed: a rewritten file replaces it, a grown one adds.
    files: HashMap<String, HashSet<(String, ObsId)>>,
}

/// Whether two reports of one observation (same time, site and position) also agree in what the fit
/// and the screens read besides: uncertainties, their correlation, magnitude, band and the observer's
/// own position (a roving observer's coordinates can be corrected).
fn same_report(a: &Observation, b: &Observation) -> bool {
    let same = |x: Option<f64>, y: Option<f64>| x.map(f64::to_bits) == y.map(f64::to_bits);
    same(a.sigma_ra_arcsec, b.sigma_ra_arcsec)
        && same(a.sigma_dec_arcsec, b.sigma_dec_arcsec)
        && same(a.correlation, b.correlation)
        && same(a.mag, b.mag)
        && a.band == b.band
        && a.location == b.location
}

impl Store {
    pub fn new() -> Store {
        Store::default()
    }

    /// Take in one file's bytes (the whole file, also when it grew or was rewritten): observations it
    /// no longer reports leave (unless another file reports them too), new ones join. A file refused
    /// as a whole keeps what its earlier version contributed.
    pub fn ingest(
        &mut self,
        file: &str,
        bytes: &[u8],
        sites: &SiteTable,
        limits: &Limits,
    ) -> Ingest {
        let intake = read_bytes(file, bytes, sites, limits);
        let mut out = Ingest {
            errors: intake.errors,
            rejected: intake.rejected,
            ..Ingest::default()
        };
        if intake.rejected {
            return out;
        }
        let mut incoming: Vec<(String, ObsId, Observation, String)> = Vec::new();
        for t in intake.tracklets {
            for o in t.obs {
                incoming.push((t.object.clone(), ObsId::of(&o), o, t.source.clone()));
            }
        }
        let new_set: HashSet<(String, ObsId)> = incoming
            .iter()
            .map(|(obj, k, _, _)| (obj.clone(), k.clone()))
            .collect();
        let old_set = self.files.remove(file).unwrap_or_default();
        let mut touched: BTreeSet<String> = BTreeSet::new();
        for (obj, key) in old_set.difference(&new_set) {
            let Some(e) = self.objects.get_mut(obj) else {
                continue;
            };
            if let Some((_, owners)) = e.obs.get_mut(key) {
                owners.remove(file);
                if owners.is_empty() {
                    e.obs.remove(key);
                    out.withdrawn_observations += 1;
                    touched.insert(obj.clone());
                }
            }
        }
        for (obj, key, o, source) in incoming {
            let e = self.objects.entry(obj.clone()).or_default();
            if !e.sources.contains(&source) {
                e.sources.push(source);
            }
            match e.obs.get_mut(&key) {
                Some((held, owners)) => {
                    // A rewrite of the only file reporting it can restate its uncertainty or
                    // magnitude: the fit must see the new values.
                    let only_here = owners.iter().all(|f| f == file);
                    if only_here && !same_report(held, &o) {
                        *held = o;
                        touched.insert(obj.clone());
                    }
                    owners.insert(file.to_string());
                }
                None => {
                    e.obs.insert(key, (o, BTreeSet::from([file.to_string()])));
                    out.new_observations += 1;
                    touched.insert(obj);
                }
            }
        }
        self.files.insert(file.to_string(), new_set);
        for obj in touched {
            if let Some(e) = self.objects.get_mut(&obj) {
                e.version += 1;
                out.changed.push((obj, e.version));
            }
        }
        out
    }

    /// The current tracklet of an object.
    pub fn tracklet(&self, object: &str) -> Option<Tracklet> {
        let e = self.objects.get(object)?;
        // The same rule as every other path: one observation reported in two precisions is one.
        Some(Tracklet::new(
            object.to_string(),
            e.sources.join("; "),
            super::tracklets::dedupe(e.obs.values().map(|(o, _)| o.clone()).collect()),
        ))
    }

    pub fn version(&self, object: &str) -> Option<u64> {
        self.objects.get(object).map(|e| e.version)
    }

    pub fn n_objects(&self) -> usize {
        self.objects.len()
    }

    pub fn n_observations(&self) -> usize {
        self.objects.values().map(|e| e.obs.len()).sum()
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn psv(rows: &[(&str, &str, f64)]) -> Vec<u8> {
        let mut s = String::from("# version=2022\ntrkSub|mode|stn|obsTime|ra|dec|rmsRA|rmsDec\n");
        for (id, t, ra) in rows {
            s.push_str(&format!(
                "{id}|CCD|TV1|2027-02-26T{t}Z|{ra}|+10.0|0.2|0.2\n"
            ));
        }
        s.into_bytes()
    }

    /// Regression: a file rewritten with the same positions but new uncertainties was taken as
    /// unchanged, and the fit kept the old σ (watch and `fit` of the final file disagreed).
    #[test]
    fn a_rewrite_that_restates_only_the_uncertainties_changes_the_object() {
        let (sites, limits) = (SiteTable::builtin(), Limits::default());
        let mut st = Store::new();
        let rows = [("X1", "03:00:00", 120.0), ("X1", "03:10:00", 120.01)];
        st.ingest("a.psv", &psv(&rows), &sites, &limits);
        let wider = String::from_utf8(psv(&rows))
            .unwrap()
            .replace("|0.2|0.2", "|0.3|0.3");
        let ing = st.ingest("a.psv", wider.as_bytes(), &sites, &limits);
        assert_eq!(ing.changed, vec![("X1".to_string(), 2)]);
        let t = st.tracklet("X1").unwrap();
        assert!(t.obs.iter().all(|o| o.sigma_ra_arcsec == Some(0.3)));
        // The same bytes again change nothing.
        let again = st.ingest("a.psv", wider.as_bytes(), &sites, &limits);
        assert!(again.changed.is_empty());
    }

    #[test]
    fn a_rewritten_file_replaces_its_observations_and_a_grown_one_adds() {
        let (sites, limits) = (SiteTable::builtin(), Limits::default());
        let mut st = Store::new();
        let times = ["03:00:00", "03:10:00", "03:20:00", "03:30:00", "03:40:00"];
        let first: Vec<(&str, &str, f64)> = times
            .iter()
            .enumerate()
            .map(|(k, t)| ("X1", *t, 120.0 + 0.01 * k as f64))
            .collect();
        st.ingest("a.psv", &psv(&first), &sites, &limits);
        assert_eq!(st.tracklet("X1").unwrap().obs.len(), 5);
        // The same file rewritten with corrected positions: still five, the new ones.
        let fixed: Vec<(&str, &str, f64)> = times
            .iter()
            .enumerate()
            .map(|(k, t)| ("X1", *t, 120.5 + 0.01 * k as f64))
            .collect();
        let ing = st.ingest("a.psv", &psv(&fixed), &sites, &limits);
        assert_eq!(ing.withdrawn_observations, 5);
        let t = st.tracklet("X1").unwrap();
        assert_eq!(t.obs.len(), 5);
        assert!(t.obs.iter().all(|o| o.ra.to_degrees() > 120.4));
        // Grown: two lines appended add two.
        let mut grown = fixed.clone();
        grown.push(("X1", "03:50:00", 120.55));
        grown.push(("X1", "04:00:00", 120.56));
        st.ingest("a.psv", &psv(&grown), &sites, &limits);
        assert_eq!(st.tracklet("X1").unwrap().obs.len(), 7);
        // An observation another file also reports stays when this file drops it.
        st.ingest("b.psv", &psv(&grown[..1]), &sites, &limits);
        st.ingest("a.psv", &psv(&grown[1..]), &sites, &limits);
        assert_eq!(st.tracklet("X1").unwrap().obs.len(), 7);
    }
}
