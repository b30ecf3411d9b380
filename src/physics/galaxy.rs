//! A Milky Way potential, the Sun's place and motion in it, and the envelope of a star's Galactic
//! orbit (pericentre, apocentre, greatest height above the plane, eccentricity).
//!
//! The potential has the published values of the three-part model fitted to Milky Way kinematics in
//! 2014 and distributed as `MWPotential2014` with the galpy package (checked against galpy in the
//! tests): a power-law bulge ρ ∝ r^−1.8 exp(−(r/1.9 kpc)²) carrying 5 % of the radial force at R₀, a
//! Miyamoto–Nagai disc (a = 3 kpc, b = 280 pc) carrying 60 %, and an NFW halo (scale radius 16 kpc)
//! carrying 35 %, with R₀ = 8 kpc and a circular speed of 220 km/s there. Internally lengths are in
//! units of R₀ and speeds in units of the circular speed, as in that package, so each part is fixed by
//! its share of the force at R₀ alone.

use super::dopri::{Control, IntegrationError, Tolerance, integrate};
use super::{S6, V3};
use std::sync::OnceLock;

/// Name of the potential, as reported.
pub const POTENTIAL_NAME: &str =
    "MWPotential2014 (bulge with cutoff + Miyamoto-Nagai disc + NFW halo)";
/// Distance unit of the model: the Sun's distance from the Galactic axis (kpc).
pub const MODEL_R0_KPC: f64 = 8.0;
/// Speed unit of the model: the circular speed at R₀ (km/s).
pub const MODEL_VC_KM_S: f64 = 220.0;
/// Kilometres per kiloparsec (IAU 2015 parsec from the IAU 2012 au).
pub const KPC_KM: f64 = 3.085_677_581_491_367e16;
/// Seconds per gigayear (Julian years).
pub const GYR_S: f64 = 1e9 * 365.25 * 86_400.0;

const BULGE_ALPHA: f64 = 1.8;
const BULGE_RC: f64 = 1.9 / MODEL_R0_KPC;
const BULGE_SHARE: f64 = 0.05;
const DISC_A: f64 = 3.0 / MODEL_R0_KPC;
const DISC_B: f64 = 0.28 / MODEL_R0_KPC;
const DISC_SHARE: f64 = 0.6;
const HALO_A: f64 = 16.0 / MODEL_R0_KPC;
const HALO_SHARE: f64 = 0.35;

/// Lower incomplete gamma function γ(s, x) by its power series (x well below 100 here).
fn lower_gamma(s: f64, x: f64) -> f64 {
    if x <= 0.0 {
        return 0.0;
    }
    let (mut term, mut sum) = (1.0 / s, 1.0 / s);
    for n in 1..1000 {
        term *= x / (s + n as f64);
        sum += term;
        if term < 1e-17 * sum {
            break;
        }
    }
    sum * (s * x.ln() - x).exp()
}

/// Where the bulge's cutoff has removed all but e^−40 of its mass: beyond, the enclosed mass is total.
const BULGE_X_MAX: f64 = 40.0;

const BULGE_S: f64 = 1.5 - BULGE_ALPHA / 2.0;
/// Nodes of the tabulated enclosed mass between r_c/10 and the cutoff radius.
const BULGE_NODES: usize = 4000;

fn bulge_series(r: f64) -> f64 {
    lower_gamma(BULGE_S, (r / BULGE_RC).powi(2))
}

/// d/dr of γ(s, (r/r_c)²).
fn bulge_slope(r: f64) -> f64 {
    let x = (r / BULGE_RC).powi(2);
    x.powf(BULGE_S - 1.0) * (-x).exp() * 2.0 * r / (BULGE_RC * BULGE_RC)
}

/// First node, spacing, and (value, slope) at each node.
type MassTable = (f64, f64, Vec<(f64, f64)>);

/// The bulge's enclosed mass shape, γ(3/2 − α/2, (r/r_c)²): the series near the centre (where it
/// is short and the shape is not smooth), a cubic Hermite table out to the cutoff, the total beyond.
fn bulge_mass(r: f64) -> f64 {
    static TABLE: OnceLock<MassTable> = OnceLock::new();
    let (lo, h, t) = TABLE.get_or_init(|| {
        let lo = 0.1 * BULGE_RC;
        let hi = BULGE_X_MAX.sqrt() * BULGE_RC;
        let h = (hi - lo) / (BULGE_NODES - 1) as f64;
        let t = (0..BULGE_NODES)
            .map(|k| {
                let r = lo + h * k as f64;
                (bulge_series(r), bulge_slope(r))
            })
            .collect();
        (lo, h, t)
    });
    if r < *lo {
        return bulge_series(r);
    }
    let u = (r - lo) / h;
    let k = u.floor() as usize;
    if k + 1 >= t.len() {
        return t[t.len() - 1].0;
    }
    let s = u - k as f64;
    let (s2, s3) = (s * s, s * s * s);
    t[k].0 * (2.0 * s3 - 3.0 * s2 + 1.0)
        + t[k].1 * h * (s3 - 2.0 * s2 + s)
        + t[k + 1].0 * (-2.0 * s3 + 3.0 * s2)
        + t[k + 1].1 * h * (s3 - s2)
}

/// Radial force law of the NFW halo with unit amplitude (negative: inward).
fn halo_radial(r: f64) -> f64 {
    1.0 / (r * (HALO_A + r)) - (1.0 + r / HALO_A).ln() / (r * r)
}

/// Amplitudes making each part carry its share of the radial force at R = 1, z = 0.
struct Amplitudes {
    bulge: f64,
    disc: f64,
    halo: f64,
}

fn amplitudes() -> &'static Amplitudes {
    static AMP: OnceLock<Amplitudes> = OnceLock::new();
    AMP.get_or_init(|| {
        let disc_unit = 1.0 / (1.0 + (DISC_A + DISC_B).powi(2)).powf(1.5);
        Amplitudes {
            bulge: BULGE_SHARE / bulge_mass(1.0),
            disc: DISC_SHARE / disc_unit,
            halo: HALO_SHARE / -halo_radial(1.0),
        }
    })
}

/// Acceleration at a galactocentric position, model units (R₀, v_c).
pub fn acceleration(p: &V3) -> V3 {
    let amp = amplitudes();
    let r = p.norm().max(1e-12);
    let bulge = -amp.bulge * bulge_mass(r) / (r * r * r);
    let halo = amp.halo * halo_radial(r) / r;
    let zb = (p.z * p.z + DISC_B * DISC_B).sqrt();
    let d3 = (p.x * p.x + p.y * p.y + (DISC_A + zb).powi(2)).powf(1.5);
    let disc_r = -amp.disc / d3;
    let disc_z = -amp.disc * (DISC_A + zb) / (zb * d3);
    V3::new(
        (bulge + halo + disc_r) * p.x,
        (bulge + halo + disc_r) * p.y,
        (bulge + halo + disc_z) * p.z,
    )
}

/// Where the Sun is and how it moves: distances from the Galactic axis and the plane, the circular
/// speed at the Sun, and the Sun's motion relative to the local standard of rest (U, V, W).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SolarFrame {
    pub r0_kpc: f64,
    pub z0_kpc: f64,
    pub v_circ_km_s: f64,
    pub solar_motion_km_s: [f64; 3],
}

impl SolarFrame {
    /// Galactocentric position (kpc) and velocity (km/s) of a body at the Sun's place moving with the
    /// heliocentric velocity `uvw` (km/s; U toward the Galactic centre, V toward l = 90°, W toward the
    /// north Galactic pole). Right-handed axes: x from the Sun's side through the centre, z toward the
    /// north Galactic pole; the frame is tilted about y so that the Sun sits z₀ above the plane.
    pub fn galactocentric(&self, uvw: [f64; 3]) -> (V3, V3) {
        let d = self.r0_kpc.hypot(self.z0_kpc);
        let (s, c) = (self.z0_kpc / d, self.r0_kpc / d);
        let tilt = |v: V3| V3::new(c * v.x + s * v.z, v.y, -s * v.x + c * v.z);
        let pos = tilt(V3::new(-d, 0.0, 0.0));
        let sm = self.solar_motion_km_s;
        let vel =
            tilt(V3::new(uvw[0], uvw[1], uvw[2])) + V3::new(sm[0], sm[1] + self.v_circ_km_s, sm[2]);
        (pos, vel)
    }

    /// Velocity relative to the local standard of rest from a heliocentric one (km/s).
    pub fn to_lsr(&self, uvw: [f64; 3]) -> [f64; 3] {
        let sm = self.solar_motion_km_s;
        [uvw[0] + sm[0], uvw[1] + sm[1], uvw[2] + sm[2]]
    }
}

/// Envelope of a Galactic orbit (kpc), or the orbit leaving the Galaxy.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
pub struct Envelope {
    pub r_peri_kpc: f64,
    pub r_apo_kpc: f64,
    pub z_max_kpc: f64,
    pub ecc: f64,
    /// The orbit went beyond `ESCAPE_KPC` from the centre: the envelope is of the part inside.
    pub escapes: bool,
}

/// Distance from the centre (kpc) at which an orbit is taken to have left the Galaxy.
pub const ESCAPE_KPC: f64 = 200.0;

/// Points drawn per integration step of a traced orbit.
const TRACE_PER_STEP: usize = 6;

/// Points of a traced orbit for drawing: (R, z) in kpc.
pub type Trace = Vec<(f64, f64)>;

/// Integrate an orbit from a galactocentric state (kpc, km/s) for `gyr` gigayears and return its
/// envelope, and optionally the (R, z) path at each accepted step. Extrema between steps are found on
/// the step's cubic interpolant, so they do not depend on where the steps happen to fall.
pub fn orbit_envelope(
    pos_kpc: V3,
    vel_km_s: V3,
    gyr: f64,
    rtol: f64,
    mut trace: Option<&mut Trace>,
) -> Result<Envelope, IntegrationError> {
    let t_unit_gyr = MODEL_R0_KPC * KPC_KM / MODEL_VC_KM_S / GYR_S;
    let t_end = gyr / t_unit_gyr;
    let p = pos_kpc / MODEL_R0_KPC;
    let v = vel_km_s / MODEL_VC_KM_S;
    let y0 = S6::new(p.x, p.y, p.z, v.x, v.y, v.z);
    let f = |_t: f64, y: &S6| {
        let a = acceleration(&V3::new(y[0], y[1], y[2]));
        Ok(S6::new(y[3], y[4], y[5], a.x, a.y, a.z))
    };
    let r_of = |y: &S6| V3::new(y[0], y[1], y[2]).norm();
    let rv = |y: &S6| y[0] * y[3] + y[1] * y[4] + y[2] * y[5];
    let (mut r_min, mut r_max, mut z_max) = (r_of(&y0), r_of(&y0), y0[2].abs());
    let mut escapes = false;
    let tol = Tolerance {
        rtol,
        atol: rtol * 1e-2,
        h0: 1e-3,
        h_max: 0.5,
        max_steps: 2_000_000,
    };
    integrate(f, 0.0, y0, 1.0, &tol, |s| {
        if let Some(tr) = trace.as_deref_mut() {
            // Steps are long (a tenth of an orbit or so): draw through them on the interpolant.
            for k in 1..=TRACE_PER_STEP {
                let y = s.at(s.t0 + (s.t1 - s.t0) * k as f64 / TRACE_PER_STEP as f64);
                tr.push((y[0].hypot(y[1]) * MODEL_R0_KPC, y[2] * MODEL_R0_KPC));
            }
        }
        r_min = r_min.min(r_of(&s.y1));
        r_max = r_max.max(r_of(&s.y1));
        z_max = z_max.max(s.y1[2].abs());
        if rv(&s.y0).signum() != rv(&s.y1).signum() {
            let t = root_on_step(s, |y| rv(y));
            let r = r_of(&s.at(t));
            r_min = r_min.min(r);
            r_max = r_max.max(r);
        }
        if s.y0[5].signum() != s.y1[5].signum() {
            let t = root_on_step(s, |y| y[5]);
            z_max = z_max.max(s.at(t)[2].abs());
        }
        if r_of(&s.y1) * MODEL_R0_KPC > ESCAPE_KPC {
            escapes = true;
            return Control::Stop;
        }
        if s.t1 >= t_end {
            Control::Stop
        } else {
            Control::Continue
        }
    })?;
    let (peri, apo) = (r_min * MODEL_R0_KPC, r_max * MODEL_R0_KPC);
    Ok(Envelope {
        r_peri_kpc: peri,
        r_apo_kpc: apo,
        z_max_kpc: z_max * MODEL_R0_KPC,
        ecc: (apo - peri) / (apo + peri),
        escapes,
    })
}

/// Bisection for a sign change of g along a step's interpolant.
fn root_on_step(s: &super::dopri::Step, g: impl Fn(&S6) -> f64) -> f64 {
    let (mut a, mut b) = (s.t0, s.t1);
    let ga = g(&s.y0);
    for _ in 0..50 {
        let m = 0.5 * (a + b);
        if g(&s.at(m)).signum() == ga.signum() {
            a = m;
        } else {
            b = m;
        }
    }
    0.5 * (a + b)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_force_at_r0_is_the_circular_speed_squared() {
        // In model units the radial force at R = 1 in the plane is v_c²/R = 1, split 5/60/35 %.
        let a = acceleration(&V3::new(1.0, 0.0, 0.0));
        assert!((a.x + 1.0).abs() < 1e-12, "{}", a.x);
        assert!(a.y.abs() < 1e-15 && a.z.abs() < 1e-15);
    }

    #[test]
    fn the_series_matches_the_closed_form_at_one_half() {
        // γ(1/2, x) = √π erf(√x); erf(1) = 0.8427007929497149.
        let got = lower_gamma(0.5, 1.0);
        assert!((got - std::f64::consts::PI.sqrt() * 0.842_700_792_949_714_9).abs() < 1e-14);
    }

    #[test]
    fn the_bulge_table_follows_the_series() {
        for k in 0..500 {
            let r = 0.001 + 0.004 * k as f64;
            let (a, b) = (
                bulge_mass(r),
                bulge_series(r.min(BULGE_X_MAX.sqrt() * BULGE_RC)),
            );
            assert!((a - b).abs() < 1e-10 * b.max(1e-3), "{r}: {a} {b}");
        }
    }

    #[test]
    fn a_circular_orbit_stays_circular() {
        let env = orbit_envelope(
            V3::new(-MODEL_R0_KPC, 0.0, 0.0),
            V3::new(0.0, MODEL_VC_KM_S, 0.0),
            1.0,
            1e-10,
            None,
        )
        .unwrap();
        assert!((env.r_peri_kpc - MODEL_R0_KPC).abs() < 1e-5);
        assert!((env.r_apo_kpc - MODEL_R0_KPC).abs() < 1e-5);
        assert!(env.z_max_kpc < 1e-9 && !env.escapes);
    }

    #[test]
    fn the_sun_sits_z0_above_the_plane_at_r0_from_the_axis() {
        let f = SolarFrame {
            r0_kpc: 8.0,
            z0_kpc: 0.0208,
            v_circ_km_s: 220.0,
            solar_motion_km_s: [11.1, 12.24, 7.25],
        };
        let (p, v) = f.galactocentric([0.0; 3]);
        assert!((p.x.hypot(p.y) - 8.0).abs() < 1e-12 && (p.z - 0.0208).abs() < 1e-12);
        assert!((v.y - 232.24).abs() < 1e-12);
    }
}
