//! The population model as data: the TOML format, its validation (with file and line), and the
//! compiled-in default. Nothing here evaluates a density; see `density.rs`.

use serde::Deserialize;
use std::collections::BTreeMap;

/// The default model, compiled in.
pub const DEFAULT_TEXT: &str = include_str!("default.toml");
/// Name shown for the compiled-in model.
pub const DEFAULT_NAME: &str = "built-in population model";

/// A one-dimensional distribution of an orbital quantity.
#[derive(Debug, Clone, PartialEq, Deserialize)]
#[serde(tag = "kind", rename_all = "kebab-case", deny_unknown_fields)]
pub enum Dist {
    Uniform { min: f64, max: f64 },
    Rayleigh { sigma: f64, max: f64 },
    Histogram { edges: Vec<f64>, weights: Vec<f64> },
    Isotropic,
}

/// A bound population described by distributions of (a, e, i) with uniform angles.
#[derive(Debug, Clone, PartialEq, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct ElementPopulation {
    pub name: String,
    pub count: f64,
    pub h_ref: f64,
    pub size_slope: f64,
    pub a_au: Dist,
    pub e: Dist,
    pub i_deg: Dist,
    #[serde(default)]
    pub q_min_au: Option<f64>,
    #[serde(default)]
    pub q_max_au: Option<f64>,
}

/// A bound population described by a rate of perihelion passages over (q, 1/a, i).
#[derive(Debug, Clone, PartialEq, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct PerihelionPopulation {
    pub name: String,
    pub passages_per_year: f64,
    pub h_ref: f64,
    pub size_slope: f64,
    pub q_au: Dist,
    pub inv_a_per_au: Dist,
    pub i_deg: Dist,
}

/// One Gaussian velocity ellipsoid of the interstellar population's parent stars.
#[derive(Debug, Clone, PartialEq, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct VelocityComponent {
    pub name: String,
    pub fraction: f64,
    pub mean_km_s: [f64; 3],
    pub sigma_km_s: [f64; 3],
}

/// The interstellar population: a density far from the Sun and the velocities there.
#[derive(Debug, Clone, PartialEq, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct InterstellarPopulation {
    pub name: String,
    pub density_per_au3: f64,
    pub h_ref: f64,
    pub size_slope: f64,
    pub solar_motion_km_s: [f64; 3],
    pub component: Vec<VelocityComponent>,
}

/// The whole file.
#[derive(Debug, Clone, PartialEq, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct ModelFile {
    pub schema: u32,
    pub mag_sigma: f64,
    pub slope_g: f64,
    #[serde(default = "default_mag_v")]
    pub default_mag_v: f64,
    pub band_to_v: BTreeMap<String, f64>,
    #[serde(default)]
    pub bound: Vec<ElementPopulation>,
    #[serde(default)]
    pub perihelion: Vec<PerihelionPopulation>,
    pub interstellar: InterstellarPopulation,
}

fn default_mag_v() -> f64 {
    21.0
}

/// A model file that cannot be used, with where and why.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[error("{file}: line {line}: {reason}")]
pub struct ModelError {
    pub file: String,
    pub line: usize,
    pub reason: String,
}

/// Line (1-based) of the first line at or after `from` that starts with `key` followed by `=`.
fn line_of_key(text: &str, from: usize, key: &str) -> usize {
    for (k, l) in text.lines().enumerate().skip(from.saturating_sub(1)) {
        let t = l.trim_start();
        if let Some(rest) = t.strip_prefix(key)
            && rest.trim_start().starts_with('=')
        {
            return k + 1;
        }
    }
    from.max(1)
}

/// Line of `name = "<name>"`, the anchor of one population's table.
fn line_of_name(text: &str, name: &str) -> usize {
    let quoted = format!("\"{name}\"");
    text.lines()
        .position(|l| {
            let t = l.trim_start();
            t.starts_with("name") && t.contains(&quoted)
        })
        .map_or(1, |k| k + 1)
}

/// What a quantity is, for the checks its distribution must pass.
#[derive(Clone, Copy, PartialEq, Eq)]
enum Quantity {
    /// Must vanish at zero like the variable itself (eccentricity): the phase-space density divides by e.
    Eccentricity,
    /// Must vanish like sin i at zero (and at 180°).
    Inclination,
    /// A positive quantity (a, q).
    Positive,
    /// Barycentric 1/a of a bound population: non-negative.
    InverseA,
}

fn check_dist(d: &Dist, what: Quantity) -> Result<(), String> {
    let finite_pos = |x: f64| x.is_finite() && x > 0.0;
    match d {
        Dist::Uniform { min, max } => {
            if !(min.is_finite() && max.is_finite() && min < max) {
                return Err(format!("uniform needs finite min < max (got {min}, {max})"));
            }
            if matches!(what, Quantity::Eccentricity | Quantity::Inclination) && *min <= 0.0 {
                return Err(
                    "a flat distribution from zero makes the phase-space density diverge there; \
                     use rayleigh or start above zero"
                        .into(),
                );
            }
            check_range(*min, *max, what)
        }
        Dist::Rayleigh { sigma, max } => {
            if !finite_pos(*sigma) || !finite_pos(*max) {
                return Err("rayleigh needs sigma > 0 and max > 0".into());
            }
            if what == Quantity::Positive || what == Quantity::InverseA {
                return Err("rayleigh is for eccentricity and inclination only".into());
            }
            check_range(0.0, *max, what)
        }
        Dist::Histogram { edges, weights } => {
            if edges.len() < 2 || weights.len() + 1 != edges.len() {
                return Err(format!(
                    "histogram needs n + 1 edges for n weights (got {} edges, {} weights)",
                    edges.len(),
                    weights.len()
                ));
            }
            if edges.iter().any(|e| !e.is_finite()) || edges.windows(2).any(|w| w[0] >= w[1]) {
                return Err("histogram edges must be finite and increasing".into());
            }
            if weights.iter().any(|w| !w.is_finite() || *w < 0.0)
                || weights.iter().sum::<f64>() <= 0.0
            {
                return Err("histogram weights must be non-negative with a positive sum".into());
            }
            let lo = edges[0];
            let hi = edges[edges.len() - 1];
            if matches!(what, Quantity::Eccentricity | Quantity::Inclination)
                && lo <= 0.0
                && weights[0] > 0.0
            {
                return Err(
                    "a histogram with weight at zero makes the phase-space density diverge there; \
                     use rayleigh or start above zero"
                        .into(),
                );
            }
            check_range(lo, hi, what)
        }
        Dist::Isotropic => {
            if what == Quantity::Inclination {
                Ok(())
            } else {
                Err("isotropic is for inclination only".into())
            }
        }
    }
}

fn check_range(lo: f64, hi: f64, what: Quantity) -> Result<(), String> {
    match what {
        Quantity::Eccentricity if lo < 0.0 || hi >= 1.0 => Err(format!(
            "bound eccentricities lie in [0, 1) (got {lo}..{hi})"
        )),
        Quantity::Inclination if lo < 0.0 || hi > 180.0 => Err(format!(
            "inclinations lie in [0, 180] degrees (got {lo}..{hi})"
        )),
        Quantity::Positive if lo < 0.0 => Err(format!("must be positive (got {lo})")),
        Quantity::InverseA if lo < 0.0 => Err(format!(
            "a bound population has 1/a > 0 (got {lo}); unbound objects belong in [interstellar]"
        )),
        _ => Ok(()),
    }
}

fn check_size(count: f64, h_ref: f64, slope: f64) -> Result<(), String> {
    if !(count.is_finite() && count > 0.0) {
        return Err(format!("the count must be positive (got {count})"));
    }
    if !(h_ref.is_finite() && (-5.0..=40.0).contains(&h_ref)) {
        return Err(format!("h_ref must lie in [-5, 40] (got {h_ref})"));
    }
    if !(slope.is_finite() && slope > 0.0 && slope <= 1.5) {
        return Err(format!("size_slope must lie in (0, 1.5] (got {slope})"));
    }
    Ok(())
}

impl ModelFile {
    /// Parse and validate a model file; `file` names it in messages.
    pub fn parse(file: &str, text: &str) -> Result<ModelFile, ModelError> {
        let err = |line: usize, reason: String| ModelError {
            file: file.to_string(),
            line,
            reason,
        };
        let m: ModelFile = toml::from_str(text).map_err(|e| {
            let line = e.span().map_or(1, |s| {
                text[..s.start.min(text.len())].matches('\n').count() + 1
            });
            err(line, e.message().to_string())
        })?;
        if m.schema != 1 {
            return Err(err(
                line_of_key(text, 1, "schema"),
                format!("schema {} is not known (this version reads 1)", m.schema),
            ));
        }
        let top = |key: &str| line_of_key(text, 1, key);
        if !(m.mag_sigma.is_finite() && (0.0..=2.0).contains(&m.mag_sigma)) {
            return Err(err(top("mag_sigma"), "mag_sigma must lie in [0, 2]".into()));
        }
        if !(m.slope_g.is_finite() && (-0.5..=1.5).contains(&m.slope_g)) {
            return Err(err(
                top("slope_g"),
                "slope_g must lie in [-0.5, 1.5]".into(),
            ));
        }
        if !(m.default_mag_v.is_finite() && (0.0..=35.0).contains(&m.default_mag_v)) {
            return Err(err(
                top("default_mag_v"),
                "default_mag_v must lie in [0, 35]".into(),
            ));
        }
        for (band, off) in &m.band_to_v {
            if !off.is_finite() || off.abs() > 5.0 {
                return Err(err(
                    top(band),
                    format!("band offset for '{band}' must lie within ±5 mag"),
                ));
            }
        }
        if m.bound.is_empty() && m.perihelion.is_empty() {
            return Err(err(1, "at least one bound population is needed".into()));
        }
        let mut names = std::collections::BTreeSet::new();
        for p in &m.bound {
            let at = line_of_name(text, &p.name);
            let key = |k: &str| line_of_key(text, at, k);
            if !names.insert(p.name.clone()) {
                return Err(err(at, format!("population '{}' appears twice", p.name)));
            }
            check_size(p.count, p.h_ref, p.size_slope).map_err(|r| err(at, r))?;
            check_dist(&p.a_au, Quantity::Positive).map_err(|r| err(key("a_au"), r))?;
            check_dist(&p.e, Quantity::Eccentricity).map_err(|r| err(key("e"), r))?;
            check_dist(&p.i_deg, Quantity::Inclination).map_err(|r| err(key("i_deg"), r))?;
            if let (Some(lo), Some(hi)) = (p.q_min_au, p.q_max_au)
                && lo >= hi
            {
                return Err(err(
                    key("q_max_au"),
                    "q_min_au must be below q_max_au".into(),
                ));
            }
            for (k, v) in [("q_min_au", p.q_min_au), ("q_max_au", p.q_max_au)] {
                if v.is_some_and(|x| !x.is_finite() || x < 0.0) {
                    return Err(err(key(k), format!("{k} must be a non-negative number")));
                }
            }
        }
        for p in &m.perihelion {
            let at = line_of_name(text, &p.name);
            let key = |k: &str| line_of_key(text, at, k);
            if !names.insert(p.name.clone()) {
                return Err(err(at, format!("population '{}' appears twice", p.name)));
            }
            check_size(p.passages_per_year, p.h_ref, p.size_slope).map_err(|r| err(at, r))?;
            check_dist(&p.q_au, Quantity::Positive).map_err(|r| err(key("q_au"), r))?;
            check_dist(&p.inv_a_per_au, Quantity::InverseA)
                .map_err(|r| err(key("inv_a_per_au"), r))?;
            check_dist(&p.i_deg, Quantity::Inclination).map_err(|r| err(key("i_deg"), r))?;
        }
        let iso = &m.interstellar;
        let at = line_of_key(text, 1, "density_per_au3");
        check_size(iso.density_per_au3, iso.h_ref, iso.size_slope).map_err(|r| err(at, r))?;
        if iso
            .solar_motion_km_s
            .iter()
            .any(|x| !x.is_finite() || x.abs() > 100.0)
        {
            return Err(err(
                line_of_key(text, 1, "solar_motion_km_s"),
                "solar_motion_km_s components must lie within ±100 km/s".into(),
            ));
        }
        if iso.component.is_empty() {
            return Err(err(
                at,
                "[interstellar] needs at least one component".into(),
            ));
        }
        for c in &iso.component {
            let cl = line_of_name(text, &c.name);
            if !(c.fraction.is_finite() && c.fraction > 0.0) {
                return Err(err(
                    cl,
                    format!("component '{}': fraction must be positive", c.name),
                ));
            }
            if c.sigma_km_s
                .iter()
                .any(|s| !s.is_finite() || *s <= 0.0 || *s > 1000.0)
                || c.mean_km_s
                    .iter()
                    .any(|s| !s.is_finite() || s.abs() > 1000.0)
            {
                return Err(err(
                    cl,
                    format!(
                        "component '{}': dispersions must lie in (0, 1000] and means within ±1000 km/s",
                        c.name
                    ),
                ));
            }
        }
        Ok(m)
    }

    /// The compiled-in default.
    pub fn builtin() -> ModelFile {
        match ModelFile::parse(DEFAULT_NAME, DEFAULT_TEXT) {
            Ok(m) => m,
            // The default is checked by a unit test; reaching this is a build defect.
            Err(e) => panic!("the built-in population model is invalid: {e}"),
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn builtin_model_parses_and_validates() {
        let m = ModelFile::parse(DEFAULT_NAME, DEFAULT_TEXT).unwrap();
        assert!(m.bound.len() >= 3);
        assert_eq!(m.perihelion.len(), 1);
        assert_eq!(m.interstellar.component.len(), 3);
    }

    #[test]
    fn unknown_key_is_reported_with_its_line() {
        let text = DEFAULT_TEXT.replace("q_min_au = 1.6", "q_min_au = 1.6\nq_minimum = 2.0");
        let e = ModelFile::parse("x.toml", &text).unwrap_err();
        let want = text
            .lines()
            .position(|l| l.starts_with("q_minimum"))
            .unwrap()
            + 1;
        assert_eq!(e.line, want, "{e}");
        assert!(e.reason.contains("unknown field"), "{e}");
    }

    #[test]
    fn flat_eccentricity_from_zero_is_refused_with_the_line() {
        let text = DEFAULT_TEXT.replace(
            "e = { kind = \"rayleigh\", sigma = 0.1, max = 0.4 }",
            "e = { kind = \"uniform\", min = 0.0, max = 0.4 }",
        );
        let e = ModelFile::parse("x.toml", &text).unwrap_err();
        assert!(
            e.reason.contains("diverge") || e.reason.contains("[0, 1)"),
            "{e}"
        );
        let want = text
            .lines()
            .position(|l| l.contains("min = 0.0, max = 0.4"))
            .unwrap()
            + 1;
        assert_eq!(e.line, want);
    }

    #[test]
    fn negative_density_is_refused() {
        let text = DEFAULT_TEXT.replace("density_per_au3 = 0.1", "density_per_au3 = -1.0");
        let e = ModelFile::parse("x.toml", &text).unwrap_err();
        assert!(e.reason.contains("count must be positive"), "{e}");
        let want = text
            .lines()
            .position(|l| l.starts_with("density_per_au3"))
            .unwrap()
            + 1;
        assert_eq!(e.line, want);
    }
}
