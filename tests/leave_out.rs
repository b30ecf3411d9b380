//! The one-linearisation estimate of leaving a night out, against the full refit it stands in for: on a
//! ten-night main-belt arc (tests/reference/data/synthetic, made by make_synthetic.py from DE421 + ERFA),
//! every night's estimate lands within a small fraction of a standard deviation of the refit, and its
//! covariance matches the refit's to a few per cent.
#![allow(clippy::unwrap_used)] // a failed step in a test should stop it loudly

use interloper::feed::sites::SiteTable;
use interloper::feed::tracklets::{Limits, read_bytes};
use interloper::fitting::leaveout::leave_out;
use interloper::fitting::lsq::{LsqOptions, Problem, correct};
use interloper::fitting::perturb::TwoBody;
use interloper::physics::constants::MU_SUN;
use interloper::physics::observe::ObserverModel;

#[test]
fn each_night_left_out_is_estimated_within_a_tenth_of_sigma_of_its_refit() {
    let path = format!(
        "{}/tests/reference/data/synthetic/mainbelt_10n.psv",
        env!("CARGO_MANIFEST_DIR")
    );
    let bytes = std::fs::read(path).unwrap();
    let tr = read_bytes("m.psv", &bytes, &SiteTable::builtin(), &Limits::default())
        .tracklets
        .remove(0);
    let model = ObserverModel::new();
    let observers = tr
        .obs
        .iter()
        .map(|o| model.observer(&o.location, &o.time).unwrap())
        .collect();
    let epoch = tr.obs[0].time.tdb.plus_days(tr.arc_days() / 2.0);
    let p = Problem::new(
        &tr,
        observers,
        tr.covariances(true),
        epoch,
        MU_SUN,
        &TwoBody,
    );
    let opts = LsqOptions::default();
    let used = vec![true; tr.obs.len()];
    // The full fit, from the first Gauss seed that converges (a ten-night arc has one minimum).
    let seed = interloper::fitting::search::night_triplets(&p)
        .into_iter()
        .flat_map(|t| interloper::fitting::search::gauss_seeds(&p, t))
        .find_map(|s| correct(&p, &s, &used, &opts).ok().filter(|f| f.converged))
        .unwrap();
    let nights = tr.n_nights();
    assert!(nights >= 8);
    let keeps: Vec<Vec<bool>> = (0..nights)
        .map(|k| (0..tr.obs.len()).map(|i| tr.night[i] != k).collect())
        .collect();
    let estimates = leave_out(&p, &seed.state, &used, &keeps);
    for (k, (keep, est)) in keeps.iter().zip(estimates).enumerate() {
        let (state, cov) = est.unwrap();
        let refit = correct(&p, &seed.state, keep, &opts).unwrap();
        assert!(refit.converged, "night {k}");
        let c = refit.cov.unwrap();
        let d = state - refit.state;
        let m = (d.transpose() * c.try_inverse().unwrap() * d)[0].sqrt();
        assert!(m < 0.1, "night {k}: estimate {m:.3} σ from the refit");
        for i in 0..6 {
            let ratio = (cov[(i, i)] / c[(i, i)]).sqrt();
            assert!(
                (ratio - 1.0).abs() < 0.05,
                "night {k}, σ[{i}] ratio {ratio}"
            );
        }
    }
}
