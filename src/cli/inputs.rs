//! Options shared by the subcommands that read tracklets: site tables and input paths.

use anyhow::Context;
use interloper::feed::InputError;
use interloper::feed::sites::SiteTable;
use interloper::feed::tracklets::{FileIntake, Limits, read_bytes};
use std::path::{Path, PathBuf};

#[derive(Debug, clap::Args)]
pub struct SiteArgs {
    /// TOML table of sites ([[site]] with code, name, longitude_deg, latitude_deg, altitude_m, or
    /// rho_cos_phi and rho_sin_phi); added to the built-in demo sites.
    #[arg(long, value_name = "FILE")]
    pub sites: Option<PathBuf>,
    /// A copy of the trade's published site-code table with parallax constants.
    #[arg(long, value_name = "FILE")]
    pub site_codes: Option<PathBuf>,
}

impl SiteArgs {
    pub fn load(&self) -> anyhow::Result<SiteTable> {
        let mut t = SiteTable::builtin();
        if let Some(p) = &self.site_codes {
            let text =
                std::fs::read_to_string(p).with_context(|| format!("reading {}", p.display()))?;
            let (_, bad) = t.load_site_codes(&p.display().to_string(), &text);
            for b in bad {
                eprintln!("warning: {b}");
            }
        }
        if let Some(p) = &self.sites {
            let text =
                std::fs::read_to_string(p).with_context(|| format!("reading {}", p.display()))?;
            t.load_toml(&p.display().to_string(), &text)?;
        }
        Ok(t)
    }
}

#[derive(Debug, Clone, Default, clap::Args)]
pub struct PopulationArgs {
    /// Population model (TOML, the format of the built-in one shown in the README) that replaces the
    /// built-in model behind every P(unbound).
    #[arg(long, value_name = "FILE")]
    pub population: Option<PathBuf>,
}

impl PopulationArgs {
    /// The model to fit under: the file's, validated, or the built-in one.
    pub fn load(
        &self,
    ) -> anyhow::Result<std::sync::Arc<interloper::fitting::population::PopulationModel>> {
        use interloper::fitting::population::{ModelFile, PopulationModel};
        let Some(p) = &self.population else {
            return Ok(interloper::fitting::fit::builtin_population());
        };
        let text = std::fs::read_to_string(p)
            .with_context(|| format!("reading the population model {}", p.display()))?;
        let name = p.display().to_string();
        let file = ModelFile::parse(&name, &text)?;
        Ok(std::sync::Arc::new(PopulationModel::new(name, file)))
    }
}

/// Expand directories into their visible regular files (sorted), keep files as given.
pub fn expand(paths: &[PathBuf]) -> anyhow::Result<Vec<PathBuf>> {
    let mut out = Vec::new();
    for p in paths {
        if p.is_dir() {
            let mut v: Vec<PathBuf> = std::fs::read_dir(p)
                .with_context(|| format!("listing {}", p.display()))?
                .filter_map(|e| e.ok().map(|e| e.path()))
                .filter(|f| f.is_file() && !hidden(f))
                .collect();
            v.sort();
            out.extend(v);
        } else {
            out.push(p.clone());
        }
    }
    Ok(out)
}

fn hidden(p: &Path) -> bool {
    p.file_name()
        .and_then(|n| n.to_str())
        .is_some_and(|n| n.starts_with('.') || n.ends_with('~'))
}

/// Read one file into tracklets (an unreadable file becomes an input error, not a crash).
pub fn read_file(path: &Path, sites: &SiteTable, limits: &Limits) -> FileIntake {
    let name = path.display().to_string();
    match std::fs::metadata(path) {
        Ok(m) if m.len() > limits.max_bytes => {
            return FileIntake {
                tracklets: Vec::new(),
                errors: vec![InputError {
                    file: name,
                    line: 0,
                    column: None,
                    reason: format!(
                        "{} bytes is over the {}-byte limit",
                        m.len(),
                        limits.max_bytes
                    ),
                }],
                rejected: true,
            };
        }
        _ => {}
    }
    match std::fs::read(path) {
        Ok(b) => read_bytes(&name, &b, sites, limits),
        Err(e) => FileIntake {
            tracklets: Vec::new(),
            errors: vec![InputError {
                file: name,
                line: 0,
                column: None,
                reason: format!("cannot read: {e}"),
            }],
            rejected: true,
        },
    }
}

/// When the console may use colour.
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum ColorChoice {
    /// Colour unless NO_COLOR is set.
    Auto,
    Always,
    Never,
}

#[derive(Debug, Clone, clap::Args)]
pub struct ColorArgs {
    /// Colour in the console (nothing is said by colour alone).
    #[arg(long, value_enum, default_value_t = ColorChoice::Auto)]
    pub color: ColorChoice,
}

impl ColorArgs {
    pub fn theme(&self) -> interloper::console::panes::Theme {
        match self.color {
            ColorChoice::Auto => interloper::console::panes::Theme::from_env(),
            ColorChoice::Always => interloper::console::panes::Theme { color: true },
            ColorChoice::Never => interloper::console::panes::Theme { color: false },
        }
    }
}

/// Every tracklet in `paths` (files, or directories of them), each rejected file or line reported on
/// stderr, merged by object; with the number of rejections.
pub fn read_tracklets(
    paths: &[PathBuf],
    sites: &SiteTable,
) -> anyhow::Result<(Vec<interloper::fitting::input::Tracklet>, usize)> {
    let limits = Limits::default();
    let mut tracklets = Vec::new();
    let mut input_errors = 0;
    for f in expand(paths)? {
        let intake = read_file(&f, sites, &limits);
        for e in &intake.errors {
            eprintln!("rejected: {e}");
        }
        input_errors += intake.errors.len();
        tracklets.extend(intake.tracklets);
    }
    Ok((interloper::feed::tracklets::merge(tracklets), input_errors))
}
