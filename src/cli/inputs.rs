//! Options shared by the subcommands that read tracklets: site tables and input paths.

use anyhow::Context;
use interloper::feed::sites::SiteTable;
use interloper::feed::tracklets::{FileIntake, Limits, read_bytes};
use interloper::feed::{Accept, InputError};
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
    /// The built-in sites, then the site codes and the site table (each from its flag, else from the
    /// configuration file), with the configured default minimum altitude.
    /// A table that cannot be read or is invalid is a usage error (exit 2), as a faulty configuration
    /// file is: the command named a file the run cannot start without.
    pub fn load(&self) -> anyhow::Result<SiteTable> {
        self.load_tables().map_err(as_usage)
    }

    fn load_tables(&self) -> anyhow::Result<SiteTable> {
        let cfg = super::config::get();
        let caps = interloper::fitting::conditions::Capabilities {
            min_alt_deg: cfg.min_alt_deg.value,
            ..Default::default()
        };
        let mut t = SiteTable::builtin_with(caps);
        let site_codes = self.site_codes.as_ref().or(cfg.site_codes.value.as_ref());
        let sites = self.sites.as_ref().or(cfg.sites.value.as_ref());
        if let Some(p) = site_codes {
            let text = read_side_file(p)?;
            let (n, bad) = t.load_site_codes(&p.display().to_string(), &text);
            // A table with no site in it is not a site-code table (a wrong file named, or every
            // line broken): refused, as an invalid site table is. A few bad lines are said.
            if n == 0 {
                let why = bad
                    .iter()
                    .take(3)
                    .map(|b| b.to_string())
                    .collect::<Vec<_>>()
                    .join("; ");
                anyhow::bail!(
                    "{}: no site could be read (code, longitude, rho cos phi, rho sin phi, name){}",
                    p.display(),
                    if why.is_empty() {
                        String::new()
                    } else {
                        format!(": {why}")
                    }
                );
            }
            for b in bad {
                eprintln!("warning: {b}");
            }
        }
        if let Some(p) = sites {
            let text = read_side_file(p)?;
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
    /// A model that cannot be read or is invalid is a usage error (exit 2).
    pub fn load(
        &self,
    ) -> anyhow::Result<std::sync::Arc<interloper::fitting::population::PopulationModel>> {
        self.load_model().map_err(as_usage)
    }

    fn load_model(
        &self,
    ) -> anyhow::Result<std::sync::Arc<interloper::fitting::population::PopulationModel>> {
        use interloper::fitting::population::{ModelFile, PopulationModel};
        let configured = super::config::get().population.value.as_ref();
        let Some(p) = self.population.as_ref().or(configured) else {
            return Ok(interloper::fitting::fit::builtin_population());
        };
        let text = read_side_file(p).context("reading the population model")?;
        let name = p.display().to_string();
        let file = ModelFile::parse(&name, &text)?;
        Ok(std::sync::Arc::new(PopulationModel::new(name, file)))
    }
}

/// A side file's fault, with its whole context, as a usage error.
fn as_usage(e: anyhow::Error) -> anyhow::Error {
    crate::cli::Usage(format!("{e:#}")).into()
}

/// Largest site table, site-code table or population model read (a device or a runaway file named
/// by mistake is refused, not read until memory runs out).
const MAX_SIDE_FILE_BYTES: u64 = 16 << 20;

/// Read a side file (sites, site codes, population model) of at most [`MAX_SIDE_FILE_BYTES`].
fn read_side_file(p: &Path) -> anyhow::Result<String> {
    let name = || interloper::feed::sanitize::clean(&p.display().to_string());
    let bytes = interloper::feed::read_at_most(p, MAX_SIDE_FILE_BYTES, Accept::AnyFile)
        .with_context(|| format!("reading {}", name()))?;
    if bytes.len() as u64 > MAX_SIDE_FILE_BYTES {
        anyhow::bail!("{} is over {MAX_SIDE_FILE_BYTES} bytes: not read", name());
    }
    String::from_utf8(bytes).with_context(|| format!("{} is not UTF-8 text", name()))
}

/// A file to read and how it was found.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct InputFile {
    pub path: PathBuf,
    /// Named on the command line (read whatever it is) or met in a directory (regular files only).
    pub accept: Accept,
}

/// The files named on the command line, directories walked.
#[derive(Debug, Default)]
pub struct Inputs {
    /// Files to read, in a stable order (directories sorted, depth first).
    pub files: Vec<InputFile>,
    /// Files met inside directories that are clearly not tracklet files, by extension.
    pub skipped: std::collections::BTreeMap<String, usize>,
    /// Special files met inside directories (FIFOs, devices, sockets), refused unread: reading one
    /// could wait for ever or never end. One named on the command line is read (`<(…)` is a pipe).
    pub refused: Vec<InputError>,
}

impl Inputs {
    /// One line for stderr about what was skipped, if anything was.
    pub fn skipped_note(&self) -> Option<String> {
        let n: usize = self.skipped.values().sum();
        (n > 0).then(|| {
            let kinds: Vec<String> = self
                .skipped
                .iter()
                .map(|(ext, k)| format!("{k} .{ext}"))
                .collect();
            let what = if n == 1 {
                "file that is not a tracklet file"
            } else {
                "files that are not tracklet files"
            };
            format!("skipped {n} {what} ({})", kinds.join(", "))
        })
    }
}

/// Extensions of files that sit beside tracklets (truth tables, configs, notes, images, archives) and
/// are never tracklets; skipped quietly inside directories. A file named on the command line is always
/// read, whatever its name.
const NOT_TRACKLETS: &[&str] = &[
    "json", "jsonl", "toml", "yaml", "yml", "md", "rst", "html", "htm", "pdf", "png", "jpg",
    "jpeg", "gif", "svg", "fits", "fit", "fz", "gz", "bz2", "xz", "zst", "zip", "tar", "py", "rs",
    "sh", "log", "lock",
];

/// Deepest directory level walked (a guard against pathological trees).
const MAX_DEPTH: usize = 64;

/// Walk the given paths: files are kept as given; directories are walked recursively (sorted; hidden
/// entries and symbolic links to directories are not followed). A path that does not exist is a usage
/// error.
pub fn expand(paths: &[PathBuf]) -> anyhow::Result<Inputs> {
    let mut out = Inputs::default();
    for p in paths {
        if p.is_dir() {
            walk(p, 0, &mut out)?;
        } else if p.exists() || p.is_symlink() {
            out.files.push(InputFile {
                path: p.clone(),
                accept: Accept::AnyFile,
            });
        } else {
            crate::usage!("no such file or directory: {}", p.display());
        }
    }
    Ok(out)
}

fn walk(dir: &Path, depth: usize, out: &mut Inputs) -> anyhow::Result<()> {
    let mut entries: Vec<PathBuf> = std::fs::read_dir(dir)
        .with_context(|| format!("listing {}", dir.display()))?
        .filter_map(|e| e.ok().map(|e| e.path()))
        .filter(|f| !hidden(f))
        .collect();
    entries.sort();
    for e in entries {
        let link = e.is_symlink();
        if e.is_dir() {
            // A folder that cannot be listed is one refused input among the others, not the end
            // of the run (the files beside it are still read).
            if !link
                && depth < MAX_DEPTH
                && let Err(err) = walk(&e, depth + 1, out)
            {
                out.refused.push(InputError {
                    file: interloper::feed::sanitize::clean(&e.display().to_string()),
                    line: 0,
                    column: None,
                    reason: format!("{:#}", err.root_cause()),
                });
            }
            continue;
        }
        if let Ok(m) = std::fs::metadata(&e)
            && !m.is_file()
        {
            out.refused.push(InputError {
                file: interloper::feed::sanitize::clean(&e.display().to_string()),
                line: 0,
                column: None,
                reason: "not a regular file (a FIFO, device or socket): not read".into(),
            });
            continue;
        }
        let ext = e
            .extension()
            .and_then(|x| x.to_str())
            .map(str::to_ascii_lowercase);
        match ext {
            Some(x) if NOT_TRACKLETS.contains(&x.as_str()) => {
                *out.skipped.entry(x).or_default() += 1;
            }
            // Everything else is offered to the reader, which reports what it cannot read
            // (special files included) with a reason.
            // A special file swapped in after this look is refused when opened.
            _ => out.files.push(InputFile {
                path: e,
                accept: Accept::RegularOnly,
            }),
        }
    }
    Ok(())
}

fn hidden(p: &Path) -> bool {
    p.file_name()
        .and_then(|n| n.to_str())
        .is_some_and(|n| n.starts_with('.') || n.ends_with('~'))
}

/// Read one file into tracklets (an unreadable file becomes an input error, not a crash). At most the
/// size limit is read, whatever the file is (a device named by mistake ends at the limit).
pub fn read_file(file: &InputFile, sites: &SiteTable, limits: &Limits) -> FileIntake {
    let path = file.path.as_path();
    let name = interloper::feed::sanitize::clean(&path.display().to_string());
    let refused = |reason: String| FileIntake {
        tracklets: Vec::new(),
        errors: vec![InputError {
            file: name.clone(),
            line: 0,
            column: None,
            reason,
        }],
        rejected: true,
    };
    let over = |n: u64| format!("{n} bytes is over the {}-byte limit", limits.max_bytes);
    if let Ok(m) = std::fs::metadata(path)
        && m.len() > limits.max_bytes
    {
        return refused(over(m.len()));
    }
    let read = interloper::feed::read_at_most(path, limits.max_bytes, file.accept);
    match read {
        Ok(bytes) if bytes.len() as u64 > limits.max_bytes => refused(format!(
            "more than {} bytes: over the limit",
            limits.max_bytes
        )),
        Ok(bytes) => read_bytes(&name, &bytes, sites, limits),
        Err(e) => refused(format!("cannot read: {e}")),
    }
}

/// Read files on up to `threads` threads (times are converted while reading, which costs), each
/// file's intake in the order of `paths`.
pub fn read_files(
    paths: &[InputFile],
    sites: &SiteTable,
    limits: &Limits,
    threads: usize,
) -> Vec<FileIntake> {
    let per = paths.len().div_ceil(threads.max(1)).max(1);
    std::thread::scope(|s| {
        let handles: Vec<_> = paths
            .chunks(per)
            .map(|part| {
                s.spawn(move || {
                    part.iter()
                        .map(|f| read_file(f, sites, limits))
                        .collect::<Vec<_>>()
                })
            })
            .collect();
        handles
            .into_iter()
            .flat_map(|h| h.join().unwrap_or_else(|e| std::panic::resume_unwind(e)))
            .collect()
    })
}

/// When the console may use colour.
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum ColorChoice {
    /// Colour unless NO_COLOR is set.
    Auto,
    /// Colour even where NO_COLOR is set (the flag wins).
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
            ColorChoice::Always => {
                // The terminal library drops colours itself under NO_COLOR: a flag on the command
                // line says otherwise, and wins.
                crossterm::style::force_color_output(true);
                interloper::console::panes::Theme { color: true }
            }
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
    let inputs = expand(paths)?;
    if let Some(note) = inputs.skipped_note() {
        eprintln!("{note}");
    }
    for e in &inputs.refused {
        eprintln!("rejected: {e}");
    }
    input_errors += inputs.refused.len();
    for f in &inputs.files {
        let intake = read_file(f, sites, &limits);
        for e in &intake.errors {
            eprintln!("rejected: {e}");
        }
        input_errors += intake.errors.len();
        tracklets.extend(intake.tracklets);
    }
    if tracklets.is_empty() && input_errors == 0 {
        eprintln!("{}", nothing_found(paths));
    }
    Ok((interloper::feed::tracklets::merge(tracklets), input_errors))
}

/// What stderr says when the inputs held no tracklet at all (and nothing was refused): an empty
/// directory is not an error, but silence would look like one that worked.
pub fn nothing_found(paths: &[PathBuf]) -> String {
    let names: Vec<String> = paths
        .iter()
        .map(|p| interloper::feed::sanitize::clean(&p.display().to_string()))
        .collect();
    format!("no tracklets found in {}", names.join(", "))
}

/// Keep only the tracklets of `objects` (all when empty); naming objects that match nothing is a usage
/// error that says which were asked for and lists up to ten that exist.
pub fn keep_objects(
    tracklets: &mut Vec<interloper::fitting::input::Tracklet>,
    objects: &[String],
) -> anyhow::Result<()> {
    if objects.is_empty() {
        return Ok(());
    }
    const SHOWN: usize = 10;
    let total = tracklets.len();
    let mut known: Vec<String> = tracklets
        .iter()
        .take(SHOWN)
        .map(|t| interloper::feed::sanitize::clean(&t.object))
        .collect();
    // The list is cut, and says so (an eleventh id once went missing without a word).
    if total > SHOWN {
        known.push(format!("and {} more", total - SHOWN));
    }
    tracklets.retain(|t| objects.contains(&t.object));
    if tracklets.is_empty() {
        let asked: Vec<String> = objects
            .iter()
            .map(|o| interloper::feed::sanitize::clean(o))
            .collect();
        crate::usage!(
            "no tracklet has the object id(s) {}; the inputs have {}",
            asked.join(", "),
            if known.is_empty() {
                "no tracklets".to_string()
            } else {
                known.join(", ")
            }
        );
    }
    Ok(())
}

/// The usage error for a site code the table does not hold: the known codes, and the closest ones.
pub fn unknown_site(sites: &SiteTable, code: &str) -> anyhow::Error {
    let codes = sites.codes();
    let wanted = code.to_uppercase();
    let same = |c: &str| {
        c.to_uppercase()
            .chars()
            .zip(wanted.chars())
            .filter(|(a, b)| a == b)
            .count()
    };
    // A code that differs only in case is the one meant (`tv1` once drew every TV code); else the
    // codes that share the most characters, all but one of them at least.
    let exact: Vec<&str> = codes
        .iter()
        .copied()
        .filter(|c| c.to_uppercase() == wanted)
        .collect();
    let best = codes.iter().map(|c| same(c)).max().unwrap_or(0);
    let near: Vec<&str> = if exact.is_empty() {
        codes
            .iter()
            .copied()
            .filter(|c| same(c) == best && best + 1 >= wanted.len())
            .take(5)
            .collect()
    } else {
        exact
    };
    crate::cli::Usage(format!(
        "unknown site code '{}'{}; the known codes are {} (add your own with --sites FILE)",
        interloper::feed::sanitize::clean(code),
        if near.is_empty() {
            String::new()
        } else {
            format!(" (did you mean {}?)", near.join(", "))
        },
        codes.join(", ")
    ))
    .into()
}

#[cfg(all(test, unix))]
mod tests {
    use super::*;

    #[test]
    fn a_fifo_swapped_in_after_the_walk_is_refused_not_waited_on() {
        let dir = std::env::temp_dir().join(format!("interloper-swap-{}", std::process::id()));
        let _ = std::fs::remove_dir_all(&dir);
        std::fs::create_dir_all(&dir).unwrap();
        let file = dir.join("n1.psv");
        std::fs::write(&file, "not yet a tracklet\n").unwrap();
        let inputs = expand(std::slice::from_ref(&dir)).unwrap();
        assert_eq!(inputs.files.len(), 1);
        assert_eq!(inputs.files[0].accept, Accept::RegularOnly);
        // Between the walk and the read the file becomes a FIFO nobody writes to.
        std::fs::remove_file(&file).unwrap();
        let status = std::process::Command::new("mkfifo")
            .arg(&file)
            .status()
            .unwrap();
        assert!(status.success());
        let intake = read_files(&inputs.files, &SiteTable::builtin(), &Limits::default(), 1);
        let reasons: Vec<&str> = intake[0].errors.iter().map(|e| e.reason.as_str()).collect();
        assert!(intake[0].rejected, "{reasons:?}");
        assert!(reasons[0].contains("not a regular file"), "{reasons:?}");
        // Named on the command line, a pipe is what the user meant: it is offered to the reader.
        let named = expand(std::slice::from_ref(&file)).unwrap();
        assert_eq!(named.files[0].accept, Accept::AnyFile);
        std::fs::remove_dir_all(&dir).unwrap();
    }

    #[test]
    fn color_always_overrides_a_no_color_environment() {
        use crossterm::style::Colored;
        // What NO_COLOR does inside the terminal library, without touching the environment.
        Colored::set_ansi_color_disabled(true);
        let theme = ColorArgs {
            color: ColorChoice::Always,
        }
        .theme();
        assert!(theme.color);
        assert!(!Colored::ansi_color_disabled_memoized());
    }
}
