//! Observing sites: our own TOML table (`[[site]]` entries), the bundled demo network, and the trade's
//! published table of site codes with parallax constants when the user points at a copy.

use super::InputError;
use super::sanitize::clean;
use crate::fitting::conditions::Capabilities;
use crate::physics::site::GroundPosition;
use std::collections::HashMap;

#[derive(Debug, Clone, PartialEq)]
pub struct Site {
    pub code: String,
    pub name: String,
    pub position: GroundPosition,
    /// Altitude limit, limiting magnitude, field of view and astrometric accuracy (defaults where
    /// the table is silent).
    pub caps: Capabilities,
}

#[derive(Debug, Clone, Default)]
pub struct SiteTable {
    sites: HashMap<String, Site>,
    /// Capabilities of a site whose entry does not state its own.
    defaults: Capabilities,
    /// Codes a site-code table lists without parallax constants (observers off the ground).
    off_ground: std::collections::HashSet<String>,
}

// Unknown keys are refused with their line: a misspelt key (`alt` for `altitude_m`) would otherwise put
// a site silently at sea level. Free text has its own key, `notes`.
#[derive(serde::Deserialize)]
#[serde(deny_unknown_fields)]
struct SiteFile {
    #[serde(default)]
    site: Vec<SiteEntry>,
}

#[derive(serde::Deserialize)]
#[serde(deny_unknown_fields)]
struct SiteEntry {
    code: String,
    #[serde(default)]
    name: String,
    /// Free text (instrument, contact): kept out of every computation.
    #[serde(default, rename = "notes")]
    _notes: Option<String>,
    #[serde(alias = "longitude", alias = "lon_deg")]
    longitude_deg: f64,
    #[serde(alias = "latitude", alias = "lat_deg")]
    latitude_deg: Option<f64>,
    #[serde(
        alias = "altitude",
        alias = "height_m",
        alias = "elevation_m",
        alias = "alt_m",
        alias = "elevation"
    )]
    altitude_m: Option<f64>,
    #[serde(
        alias = "rho_cos",
        alias = "rhocosphi",
        alias = "parallax_cos",
        alias = "cos_phi"
    )]
    rho_cos_phi: Option<f64>,
    #[serde(
        alias = "rho_sin",
        alias = "rhosinphi",
        alias = "parallax_sin",
        alias = "sin_phi"
    )]
    rho_sin_phi: Option<f64>,
    /// Faintest V in a standard exposure.
    limiting_mag: Option<f64>,
    /// Field of view, degrees across.
    fov_deg: Option<f64>,
    /// Lowest altitude the telescope points at (degrees).
    min_alt_deg: Option<f64>,
    /// One-coordinate accuracy of one position (arcsec).
    accuracy_arcsec: Option<f64>,
}

/// The invented demo network (no real site): codes of letter-letter-digit form, which the trade's
/// own codes never use, so they cannot be mistaken for a real station.
pub const DEMO_SITES: &str = include_str!("demo_sites.toml");

impl SiteTable {
    /// The built-in demo sites.
    pub fn builtin() -> SiteTable {
        SiteTable::builtin_with(Capabilities::default())
    }

    /// The built-in demo sites, with `defaults` for every capability a site (built-in or loaded
    /// later) does not state itself.
    pub fn builtin_with(defaults: Capabilities) -> SiteTable {
        let mut t = SiteTable {
            sites: HashMap::new(),
            defaults,
            off_ground: std::collections::HashSet::new(),
        };
        // The embedded table is part of the program and tested; a failure here is a build defect.
        if let Ok(n) = t.load_toml("<built-in demo sites>", DEMO_SITES) {
            debug_assert!(n > 0);
        }
        t
    }

    /// Whether a site-code table listed `code` without parallax constants (an observer off the ground,
    /// whose position each observation must carry).
    pub fn off_ground(&self, code: &str) -> bool {
        !self.sites.contains_key(code) && self.off_ground.contains(code)
    }

    pub fn get(&self, code: &str) -> Option<&Site> {
        self.sites.get(code)
    }

    pub fn len(&self) -> usize {
        self.sites.len()
    }

    pub fn is_empty(&self) -> bool {
        self.sites.is_empty()
    }

    pub fn codes(&self) -> Vec<&str> {
        let mut v: Vec<&str> = self.sites.keys().map(String::as_str).collect();
        v.sort_unstable();
        v
    }

    /// Add the sites of a TOML table; its entries override earlier tables' ones with the same code. One
    /// code twice in the same table is refused (which of two positions would be meant?).
    pub fn load_toml(&mut self, file: &str, text: &str) -> Result<usize, InputError> {
        let err = |line: usize, reason: String| InputError {
            file: clean(file),
            line,
            column: None,
            reason: clean(&reason),
        };
        let parsed: SiteFile = toml::from_str(text).map_err(|e| {
            let line = e
                .span()
                .map(|s| text[..s.start.min(text.len())].matches('\n').count() + 1)
                .unwrap_or(0);
            err(line, clean(e.message()))
        })?;
        let mut n = 0;
        let mut seen: HashMap<String, usize> = HashMap::new();
        for (k, s) in parsed.site.into_iter().enumerate() {
            let code = clean(s.code.trim());
            let what = format!("site {} ({code})", k + 1);
            // A value refused here is reported on its own line (or its entry's).
            let at = |names: &[&str], reason: String| {
                err(
                    super::siteentry::line_of(text, k, names),
                    format!("{what}: {reason}"),
                )
            };
            if code.is_empty() {
                return Err(at(&["code"], "empty code".into()));
            }
            if let Some(first) = seen.insert(code.clone(), k + 1) {
                return Err(at(
                    &["code"],
                    format!("code given twice in this file (site {first} has it too)"),
                ));
            }
            let position = super::siteentry::position(
                s.longitude_deg,
                s.latitude_deg,
                s.altitude_m,
                (s.rho_cos_phi, s.rho_sin_phi),
            )
            .map_err(|(names, why)| at(names, why))?;
            if !s.longitude_deg.is_finite() || s.longitude_deg.abs() > 360.0 {
                return Err(at(
                    super::siteentry::LONGITUDE,
                    format!("longitude {} is not an angle", s.longitude_deg),
                ));
            }
            let caps = capabilities(&s, &self.defaults).map_err(|(key, r)| at(&[key], r))?;
            self.sites.insert(
                code.clone(),
                Site {
                    code,
                    name: clean(&s.name),
                    position,
                    caps,
                },
            );
            n += 1;
        }
        Ok(n)
    }

    /// Add the sites of the trade's fixed-column site-code table (code, longitude, ρcos φ′, ρsin φ′,
    /// name); lines without parallax constants (space-based codes) are skipped. Returns the count and
    /// the lines it could not read.
    pub fn load_site_codes(&mut self, file: &str, text: &str) -> (usize, Vec<InputError>) {
        let mut n = 0;
        let mut bad = Vec::new();
        for (k, line) in text.lines().enumerate() {
            let chars: Vec<char> = line.chars().collect();
            if chars.len() < 4 || line.trim().is_empty() {
                continue;
            }
            let field = |a: usize, b: usize| -> String {
                chars
                    .iter()
                    .skip(a)
                    .take(b - a)
                    .collect::<String>()
                    .trim()
                    .to_string()
            };
            let code = field(0, 3);
            let (lon, c, s) = (field(4, 13), field(13, 21), field(21, 30));
            if lon.is_empty() || c.is_empty() {
                // Header lines, and space-based codes (remembered, to say so when one is used).
                if k > 0
                    && code.chars().count() == 3
                    && code.chars().all(|ch| ch.is_ascii_alphanumeric())
                {
                    self.off_ground.insert(code);
                }
                continue;
            }
            match (lon.parse::<f64>(), c.parse::<f64>(), s.parse::<f64>()) {
                // On the ground (or the geocentre itself, ρ = 0), at a longitude that is an angle.
                (Ok(lon), Ok(c), Ok(s))
                    if lon.is_finite()
                        && lon.abs() <= 360.0
                        && c >= 0.0
                        && (c.hypot(s) == 0.0 || super::siteentry::RHO.contains(&c.hypot(s))) =>
                {
                    let code = clean(&code);
                    self.sites.insert(
                        code.clone(),
                        Site {
                            code,
                            name: clean(&field(30, chars.len())),
                            position: GroundPosition::Parallax {
                                lon_deg: lon,
                                rho_cos_phi: c,
                                rho_sin_phi: s,
                            },
                            caps: self.defaults,
                        },
                    );
                    n += 1;
                }
                (Ok(lon), Ok(c), Ok(s)) => bad.push(InputError {
                    file: clean(file),
                    line: k + 1,
                    column: None,
                    reason: format!(
                        "site {}: longitude {lon} and parallax constants ({c}, {s}) do not put it \
                         on the ground (ρ {} to {} Earth radii, or 0 for the geocentre)",
                        clean(&code),
                        super::siteentry::RHO.start(),
                        super::siteentry::RHO.end()
                    ),
                }),
                _ => {
                    if k > 0 {
                        bad.push(InputError {
                            file: clean(file),
                            line: k + 1,
                            column: None,
                            reason:
                                "not a site line (code, longitude, rho cos phi, rho sin phi, name)"
                                    .into(),
                        })
                    }
                }
            }
        }
        (n, bad)
    }
}

/// The optional capability fields of a site entry, checked, with defaults for the missing ones.
/// The entry's capabilities, or the key at fault and why.
fn capabilities(s: &SiteEntry, d: &Capabilities) -> Result<Capabilities, (&'static str, String)> {
    let pick = |v: Option<f64>, def: f64, name: &'static str, ok: &dyn Fn(f64) -> bool| match v {
        None => Ok(def),
        Some(x) if x.is_finite() && ok(x) => Ok(x),
        Some(x) => Err((name, format!("{name} {x} is out of range"))),
    };
    Ok(Capabilities {
        limiting_mag: pick(s.limiting_mag, d.limiting_mag, "limiting_mag", &|x| {
            (5.0..=30.0).contains(&x)
        })?,
        fov_deg: pick(s.fov_deg, d.fov_deg, "fov_deg", &|x| x > 0.0 && x <= 60.0)?,
        min_alt_deg: pick(s.min_alt_deg, d.min_alt_deg, "min_alt_deg", &|x| {
            (0.0..90.0).contains(&x)
        })?,
        accuracy_arcsec: pick(
            s.accuracy_arcsec,
            d.accuracy_arcsec,
            "accuracy_arcsec",
            &|x| x > 0.0 && x <= 60.0,
        )?,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn builtin_demo_sites_load() {
        let t = SiteTable::builtin();
        assert!(t.len() >= 3);
        assert!(t.get("TV1").is_some());
    }

    #[test]
    fn values_refused_after_parsing_carry_their_line_and_sites_off_the_ground_are_refused() {
        let mut t = SiteTable::default();
        let head = "# network\n[[site]]\ncode = \"AB1\"\nlongitude_deg = 10\n";
        let e = t
            .load_toml("s.toml", &format!("{head}latitude_deg = 95\n"))
            .unwrap_err();
        assert_eq!(e.line, 5, "{e}");
        // Regression: an altitude of 10⁶ km was taken, and the fit ran from there.
        let e = t
            .load_toml(
                "s.toml",
                &format!("{head}lat_deg = 45\n\n[[site]]\ncode = \"AB2\"\nlongitude_deg = 1\nlatitude_deg = 1\naltitude_m = 1e9\n"),
            )
            .unwrap_err();
        assert_eq!(e.line, 11, "{e}");
        assert!(e.reason.contains("site 2 (AB2): altitude"), "{e}");
        let e = t
            .load_toml(
                "s.toml",
                &format!("{head}rho_cos_phi = 3.0\nrho_sin_phi = 0.5\n"),
            )
            .unwrap_err();
        assert_eq!(e.line, 5, "{e}");
        assert!(e.reason.contains("Earth radii"), "{e}");
        // The highest observatories and the parallax constants of a real place still load.
        t.load_toml(
            "s.toml",
            &format!("{head}latitude_deg = -23\naltitude_m = 5600\n[[site]]\ncode = \"AB3\"\nlongitude_deg = 1\nrho_cos_phi = 0.8\nrho_sin_phi = 0.6\n"),
        )
        .unwrap();
    }

    #[test]
    fn bad_site_tables_say_why() {
        let mut t = SiteTable::default();
        let e = t
            .load_toml("s.toml", "[[site]]\ncode = \"AB1\"\nlongitude_deg = 10.0\n")
            .unwrap_err();
        assert!(e.reason.contains("give latitude_deg"), "{e}");
        let e = t
            .load_toml(
                "s.toml",
                "[[site]]\ncode = \"AB1\"\nlongitude_deg = 10.0\nlatitude_deg = 95.0\n",
            )
            .unwrap_err();
        assert!(e.reason.contains("outside"), "{e}");
        let e = t
            .load_toml("s.toml", "[[site]]\ncode = \"AB1\"\nlongtude_deg = 1\n")
            .unwrap_err();
        assert!(e.reason.contains("longitude_deg"), "{e}");
        // Unknown keys are refused with their line; free text goes under `notes`; parallax constants
        // and altitude have common aliases.
        let e = t
            .load_toml(
                "s.toml",
                "[[site]]\ncode = \"AB2\"\nlongitude_deg = 10\nrho_cos = 0.8\nrho_sin = 0.6\ncomment = \"x\"\n",
            )
            .unwrap_err();
        assert_eq!(e.line, 6, "{e}");
        assert!(e.reason.contains("unknown field `comment`"), "{e}");
        let n = t
            .load_toml(
                "s.toml",
                "[[site]]\ncode = \"AB2\"\nlongitude_deg = 10\nrho_cos = 0.8\nrho_sin = 0.6\nnotes = \"x\"\n",
            )
            .unwrap();
        assert_eq!(n, 1);
        // One code twice in one table, with different positions: refused at the second's code line.
        let two = "[[site]]\ncode = \"AB3\"\nlongitude_deg = 10\nlatitude_deg = 20\n\n[[site]]\ncode = \"AB3\"\nlongitude_deg = 11\nlatitude_deg = 20\n";
        let e = t.load_toml("s.toml", two).unwrap_err();
        assert_eq!(e.line, 7, "{e}");
        assert!(e.reason.contains("given twice"), "{e}");
    }

    #[test]
    fn altitude_aliases_in_common_use_are_accepted() {
        for key in ["alt_m", "elevation", "elevation_m", "height_m", "altitude"] {
            let mut t = SiteTable::default();
            let text = format!(
                "[[site]]\ncode = \"AB4\"\nlongitude_deg = 10\nlatitude_deg = 20\n{key} = 2400\n"
            );
            t.load_toml("s.toml", &text).unwrap();
            let GroundPosition::Geodetic { alt_m, .. } = t.get("AB4").unwrap().position else {
                panic!("{key}: not geodetic");
            };
            assert_eq!(alt_m, 2400.0, "{key}");
        }
    }

    #[test]
    fn capabilities_default_and_are_checked() {
        let mut t = SiteTable::default();
        let base = "[[site]]\ncode = \"AB3\"\nlongitude_deg = 10\nlatitude_deg = 20\n";
        t.load_toml("s.toml", base).unwrap();
        assert_eq!(t.get("AB3").unwrap().caps, Capabilities::default());
        t.load_toml(
            "s.toml",
            &format!("{base}limiting_mag = 23.0\nfov_deg = 0.25\n"),
        )
        .unwrap();
        let caps = t.get("AB3").unwrap().caps;
        assert_eq!((caps.limiting_mag, caps.fov_deg), (23.0, 0.25));
        let e = t
            .load_toml("s.toml", &format!("{base}fov_deg = -1\n"))
            .unwrap_err();
        assert!(e.reason.contains("fov_deg"), "{e}");
        // On the line of the value at fault (it was the entry's header line).
        assert_eq!(e.line, 5, "{e}");
    }

    #[test]
    fn parallax_constant_table_lines_are_read() {
        let mut t = SiteTable::default();
        let text = "Code  Long.   cos      sin    Name\nXY9 123.4567 0.845120 +0.533980 Somewhere Hill\nSP1                              Orbiting thing\n";
        let (n, bad) = t.load_site_codes("codes.txt", text);
        assert_eq!((n, bad.len()), (1, 0));
        assert!(matches!(
            t.get("XY9").unwrap().position,
            GroundPosition::Parallax { .. }
        ));
        // The orbiting code is not a site, and is known as one off the ground (its positions must
        // carry the observer's own: the reason says so instead of "unknown site code").
        assert!(t.get("SP1").is_none() && t.off_ground("SP1") && !t.off_ground("XY9"));
    }

    /// Regression: a code-table site 1,100 km up (ρ 1.18) or at a longitude of NaN was taken (and the
    /// fit from it failed with a misleading reason, or stood).
    #[test]
    fn code_table_sites_off_the_ground_or_at_no_longitude_are_refused_with_their_line() {
        let mut t = SiteTable::default();
        let text = "Code  Long.   cos      sin    Name\nZZ1   NaN    0.80000 +0.60000 no longitude\n\
                    ZZ2  10.0000 1.09000 +0.45000 far off the ground\n\
                    ZZ3  10.0000 0.00000 +0.00000 the geocentre\n\
                    ZZ4  10.0000 0.80000 +0.60000 on the ground\n";
        let (n, bad) = t.load_site_codes("codes.txt", text);
        assert_eq!(n, 2, "{bad:?}");
        assert!(t.get("ZZ3").is_some() && t.get("ZZ4").is_some());
        let lines: Vec<usize> = bad.iter().map(|e| e.line).collect();
        assert_eq!(lines, vec![2, 3], "{bad:?}");
        assert!(bad[1].reason.contains("on the ground"), "{bad:?}");
    }
}
