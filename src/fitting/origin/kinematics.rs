//! Arrival and kinematics over a cloud of orbits: weighted means and spreads, the radiant's
//! uncertainty ellipse on the sky, and the kinematic membership of stars moving like the object.

use crate::fitting::population::model::VelocityComponent;
use crate::physics::V3;
use crate::physics::frames::radec_from_vector;

/// Weighted mean and standard deviation.
pub fn mean_sigma(values: &[f64], weights: &[f64]) -> (f64, f64) {
    let total: f64 = weights.iter().sum::<f64>().max(1e-300);
    let mean = values.iter().zip(weights).map(|(v, w)| v * w).sum::<f64>() / total;
    let var = values
        .iter()
        .zip(weights)
        .map(|(v, w)| w * (v - mean).powi(2))
        .sum::<f64>()
        / total;
    (mean, var.sqrt())
}

/// One-sigma uncertainty ellipse of a direction on the sky (degrees; position angle of the major
/// axis from north through east, or from b toward increasing l in galactic axes).
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
pub struct Ellipse {
    pub major_deg: f64,
    pub minor_deg: f64,
    pub pa_deg: f64,
}

/// Spread of unit vectors about a given direction, as an ellipse in the tangent plane there.
pub fn sky_ellipse(dirs: &[V3], weights: &[f64], centre: &V3) -> Ellipse {
    let (lon, lat) = radec_from_vector(centre);
    let east = V3::new(-lon.sin(), lon.cos(), 0.0);
    let north = V3::new(-lat.sin() * lon.cos(), -lat.sin() * lon.sin(), lat.cos());
    let total: f64 = weights.iter().sum::<f64>().max(1e-300);
    let (mut sxx, mut syy, mut sxy) = (0.0, 0.0, 0.0);
    for (d, w) in dirs.iter().zip(weights) {
        let k = d.dot(centre).max(1e-12);
        let (x, y) = (d.dot(&east) / k, d.dot(&north) / k);
        sxx += w * x * x;
        syy += w * y * y;
        sxy += w * x * y;
    }
    let (sxx, syy, sxy) = (sxx / total, syy / total, sxy / total);
    let mid = 0.5 * (sxx + syy);
    let half = (0.25 * (sxx - syy).powi(2) + sxy * sxy).sqrt();
    // The major axis's direction angle from north toward east.
    let pa = (0.5 * (2.0 * sxy).atan2(syy - sxx))
        .to_degrees()
        .rem_euclid(180.0);
    Ellipse {
        major_deg: (mid + half).max(0.0).sqrt().to_degrees(),
        minor_deg: (mid - half).max(0.0).sqrt().to_degrees(),
        pa_deg: pa,
    }
}

/// Relative membership of stars moving with a velocity: thin disc, thick disc and halo.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
pub struct Membership {
    pub thin_disc: f64,
    pub thick_disc: f64,
    pub halo: f64,
}

/// The three Galactic populations, as the population model names its velocity components.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum StellarPopulation {
    ThinDisc,
    ThickDisc,
    Halo,
}

impl StellarPopulation {
    pub const ALL: [StellarPopulation; 3] = [
        StellarPopulation::ThinDisc,
        StellarPopulation::ThickDisc,
        StellarPopulation::Halo,
    ];
    /// The component name in the population model file.
    pub fn model_name(self) -> &'static str {
        match self {
            StellarPopulation::ThinDisc => "thin disc",
            StellarPopulation::ThickDisc => "thick disc",
            StellarPopulation::Halo => "halo",
        }
    }
}

/// Local fraction × Gaussian ellipsoid density of each population at a velocity relative to the
/// local standard of rest (km/s), normalised to sum to one. None if the model lacks one of the three
/// components (a user model may name its components otherwise).
pub fn membership(uvw_lsr: [f64; 3], comps: &[VelocityComponent]) -> Option<Membership> {
    let mut ln = [0.0; 3];
    for (k, pop) in StellarPopulation::ALL.iter().enumerate() {
        let c = comps.iter().find(|c| c.name == pop.model_name())?;
        let mut l = c.fraction.ln();
        for ((v, m), s) in uvw_lsr.iter().zip(c.mean_km_s).zip(c.sigma_km_s) {
            let d = (v - m) / s;
            l -= 0.5 * d * d + s.ln();
        }
        ln[k] = l;
    }
    let w = crate::fitting::stats::relative_weights(ln)?;
    let s: f64 = w.iter().sum();
    Some(Membership {
        thin_disc: w[0] / s,
        thick_disc: w[1] / s,
        halo: w[2] / s,
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::physics::frames::unit_from_radec;

    #[test]
    fn an_east_west_spread_has_its_major_axis_at_90_degrees() {
        let c = unit_from_radec(1.0, 0.3);
        let dirs: Vec<V3> = [-1e-3, 1e-3]
            .iter()
            .map(|d| unit_from_radec(1.0 + d / 0.3f64.cos(), 0.3))
            .collect();
        let e = sky_ellipse(&dirs, &[1.0, 1.0], &c);
        assert!((e.pa_deg - 90.0).abs() < 1e-3, "{e:?}");
        assert!((e.major_deg - 1e-3f64.to_degrees()).abs() < 1e-6);
        // The two points lie on a small circle: the minor axis is second order in the offset.
        assert!(e.minor_deg < 1e-4, "{e:?}");
    }

    #[test]
    fn membership_sums_to_one_and_is_none_without_the_components() {
        let comps = crate::fitting::population::ModelFile::builtin()
            .interstellar
            .component;
        let m = membership([10.0, -20.0, 5.0], &comps).unwrap();
        assert!((m.thin_disc + m.thick_disc + m.halo - 1.0).abs() < 1e-12);
        assert!(m.thin_disc > m.thick_disc && m.thick_disc > m.halo);
        assert!(membership([0.0; 3], &comps[..2]).is_none());
    }
}
