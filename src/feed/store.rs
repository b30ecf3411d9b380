//! Everything taken in so far: observations per object, merged across files with duplicates removed,
//! and the versions that tell which fit is the newest.

use super::InputError;
use super::sites::SiteTable;
use super::tracklets::{Limits, read_bytes};
use crate::fitting::input::{Observation, Tracklet};
use std::collections::{BTreeMap, HashSet};

/// Identity of one observation: site, time (to 1e-8 day) and position (to 1e-9 rad).
pub type ObsKey = (String, i64, i64, i64);

pub fn obs_key(o: &Observation) -> ObsKey {
    (
        o.site_code.clone(),
        (o.time.tdb.value() * 1e8).round() as i64,
        (o.ra * 1e9).round() as i64,
        (o.dec * 1e9).round() as i64,
    )
}

#[derive(Debug, Default)]
struct Entry {
    obs: Vec<Observation>,
    keys: HashSet<ObsKey>,
    sources: Vec<String>,
    version: u64,
}

/// What one file changed.
#[derive(Debug, Default)]
pub struct Ingest {
    /// Objects with new observations, with their new version.
    pub changed: Vec<(String, u64)>,
    pub new_observations: usize,
    pub errors: Vec<InputError>,
    pub rejected: bool,
}

#[derive(Debug, Default)]
pub struct Store {
    objects: BTreeMap<String, Entry>,
}

impl Store {
    pub fn new() -> Store {
        Store::default()
    }

    /// Take in one file's bytes.
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
        for t in intake.tracklets {
            let e = self.objects.entry(t.object.clone()).or_default();
            let mut added = 0;
            for o in t.obs {
                if e.keys.insert(obs_key(&o)) {
                    e.obs.push(o);
                    added += 1;
                }
            }
            if !e.sources.contains(&t.source) {
                e.sources.push(t.source.clone());
            }
            if added > 0 {
                e.version += 1;
                out.new_observations += added;
                out.changed.push((t.object.clone(), e.version));
            }
        }
        out
    }

    /// The current tracklet of an object.
    pub fn tracklet(&self, object: &str) -> Option<Tracklet> {
        let e = self.objects.get(object)?;
        Some(Tracklet::new(
            object.to_string(),
            e.sources.join("; "),
            e.obs.clone(),
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
