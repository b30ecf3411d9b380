//! The configuration file: defaults for what would otherwise be passed as flags every night. Looked for
//! at `--config FILE`, else `$INTERLOPER_CONFIG`, else `config.toml` in the platform's configuration
//! directory; a flag given on the command line always wins over the file.

use directories::ProjectDirs;
use interloper::feed::alerts::AlertRules;
use serde::Deserialize;
use std::path::{Path, PathBuf};
use std::sync::OnceLock;

/// Environment variable naming a configuration file.
pub const CONFIG_ENV: &str = "INTERLOPER_CONFIG";

/// The file as written: every key optional, unknown keys refused.
#[derive(Debug, Default, Deserialize)]
#[serde(deny_unknown_fields)]
struct ConfigFile {
    sites: Option<PathBuf>,
    site_codes: Option<PathBuf>,
    population: Option<PathBuf>,
    state_dir: Option<PathBuf>,
    keymap: Option<PathBuf>,
    threads: Option<usize>,
    min_alt_deg: Option<f64>,
    observer: Option<String>,
    site: Option<String>,
    alerts: Option<AlertRules>,
}

/// Where a value came from.
#[derive(Debug, Clone, PartialEq)]
pub enum Source {
    /// Built in (or derived from the machine: cores, the platform's directories).
    Default,
    /// The configuration file, at this line.
    File { path: PathBuf, line: usize },
    /// An environment variable.
    Env(&'static str),
}

impl std::fmt::Display for Source {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            Source::Default => f.write_str("default"),
            Source::File { path, line } => write!(f, "{}:{line}", path.display()),
            Source::Env(v) => write!(f, "${v}"),
        }
    }
}

/// A value and where it came from.
#[derive(Debug, Clone)]
pub struct Setting<T> {
    pub value: T,
    pub from: Source,
}

impl<T> Setting<T> {
    fn default(value: T) -> Setting<T> {
        Setting {
            value,
            from: Source::Default,
        }
    }
}

/// The effective configuration: the file's values over the built-in defaults.
#[derive(Debug, Clone)]
pub struct Config {
    /// The file read, if any (and whether it was found).
    pub file: Option<PathBuf>,
    pub sites: Setting<Option<PathBuf>>,
    pub site_codes: Setting<Option<PathBuf>>,
    pub population: Setting<Option<PathBuf>>,
    pub state_dir: Setting<PathBuf>,
    pub keymap: Setting<Option<PathBuf>>,
    pub threads: Setting<usize>,
    pub min_alt_deg: Setting<f64>,
    pub observer: Setting<String>,
    /// The console ephemeris's site (else the site of each candidate's last observation).
    pub site: Setting<Option<String>>,
    /// When the console and the headless watcher call the observer back (`[alerts]`).
    pub alerts: Setting<AlertRules>,
}

/// A configuration file that cannot be used: file, line, reason.
#[derive(Debug, thiserror::Error)]
#[error("{}:{line}: {reason}", file.display())]
pub struct ConfigError {
    pub file: PathBuf,
    pub line: usize,
    pub reason: String,
}

fn dirs() -> Option<ProjectDirs> {
    ProjectDirs::from("", "", "interloper")
}

/// `config.toml` in the platform's configuration directory (on Linux `$XDG_CONFIG_HOME/interloper`,
/// else `~/.config/interloper`).
pub fn default_file() -> Option<PathBuf> {
    dirs().map(|d| d.config_dir().join("config.toml"))
}

/// A key map next to the configuration file, used when present.
fn default_keymap() -> Option<PathBuf> {
    dirs()
        .map(|d| d.config_dir().join("keymap.toml"))
        .filter(|p| p.exists())
}

/// The platform's state directory for the journal (Linux `$XDG_STATE_HOME/interloper`, else the local
/// data directory elsewhere).
pub fn default_state_dir() -> PathBuf {
    dirs().map_or_else(
        || PathBuf::from(".interloper-state"),
        |d| {
            d.state_dir()
                .unwrap_or_else(|| d.data_local_dir())
                .to_path_buf()
        },
    )
}

/// `$USER`, cleaned as the journal cleans every observer name.
fn default_observer() -> Setting<String> {
    let name = clean_name(None);
    if std::env::var("USER").is_ok_and(|u| !u.trim().is_empty()) {
        Setting {
            value: name,
            from: Source::Env("USER"),
        }
    } else {
        Setting::default(name)
    }
}

/// Observer names are shown on screen and written into the journal: the journal's own cleaning (no
/// control or invisible characters, spaces as `_`, at most 32 characters), `$USER` when none is given.
pub fn clean_name(raw: Option<&str>) -> String {
    interloper::feed::journal::observer_name(raw)
}

impl Config {
    /// The observer to sign journal lines with: `given` (a flag), else the configuration's.
    pub fn observer_for(&self, given: Option<&str>) -> String {
        match given {
            Some(g) => clean_name(Some(g)),
            None => self.observer.value.clone(),
        }
    }
}

impl Config {
    /// Built-in defaults only.
    pub fn defaults() -> Config {
        Config {
            file: None,
            sites: Setting::default(None),
            site_codes: Setting::default(None),
            population: Setting::default(None),
            state_dir: Setting::default(default_state_dir()),
            keymap: Setting::default(default_keymap()),
            threads: Setting::default(std::thread::available_parallelism().map_or(1, |n| n.get())),
            min_alt_deg: Setting::default(
                interloper::fitting::conditions::Capabilities::default().min_alt_deg,
            ),
            observer: default_observer(),
            site: Setting::default(None),
            alerts: Setting::default(AlertRules::default()),
        }
    }

    /// Parse `text` (the contents of `path`) over the defaults; relative paths in the file are taken
    /// from the file's own folder, and `~/` from the home directory.
    pub fn parse(path: &Path, text: &str) -> Result<Config, ConfigError> {
        let err = |line: usize, reason: String| ConfigError {
            file: path.to_path_buf(),
            line,
            reason: interloper::feed::sanitize::clean(&reason),
        };
        let f: ConfigFile = toml::from_str(text).map_err(|e| {
            let line = e.span().map_or(0, |s| {
                text[..s.start.min(text.len())].matches('\n').count() + 1
            });
            err(line, e.message().to_string())
        })?;
        let mut c = Config::defaults();
        c.file = Some(path.to_path_buf());
        let at = |key: &str| Source::File {
            path: path.to_path_buf(),
            line: line_of(text, key),
        };
        let base = path.parent().unwrap_or(Path::new("."));
        let resolve = |p: PathBuf| resolve_path(base, p);
        let set_path = |slot: &mut Setting<Option<PathBuf>>, v: Option<PathBuf>, key| {
            if let Some(p) = v {
                *slot = Setting {
                    value: Some(resolve(p)),
                    from: at(key),
                };
            }
        };
        set_path(&mut c.sites, f.sites, "sites");
        set_path(&mut c.site_codes, f.site_codes, "site_codes");
        set_path(&mut c.population, f.population, "population");
        set_path(&mut c.keymap, f.keymap, "keymap");
        if let Some(p) = f.state_dir {
            c.state_dir = Setting {
                value: resolve_path(base, p),
                from: at("state_dir"),
            };
        }
        if let Some(n) = f.threads {
            if !(1..=1024).contains(&n) {
                return Err(err(
                    line_of(text, "threads"),
                    format!("threads {n} is not between 1 and 1024"),
                ));
            }
            c.threads = Setting {
                value: n,
                from: at("threads"),
            };
        }
        if let Some(a) = f.min_alt_deg {
            if !(a.is_finite() && (0.0..90.0).contains(&a)) {
                return Err(err(
                    line_of(text, "min_alt_deg"),
                    format!("min_alt_deg {a} is not between 0 and 90"),
                ));
            }
            c.min_alt_deg = Setting {
                value: a,
                from: at("min_alt_deg"),
            };
        }
        if let Some(o) = f.observer {
            let name = clean_name(Some(&o));
            let plain: String = o
                .trim()
                .chars()
                .map(|c| if c.is_whitespace() { '_' } else { c })
                .take(32)
                .collect();
            if plain.is_empty() {
                return Err(err(line_of(text, "observer"), "observer is empty".into()));
            }
            if name != plain {
                return Err(err(
                    line_of(text, "observer"),
                    "observer has control or invisible characters".into(),
                ));
            }
            c.observer = Setting {
                value: name,
                from: at("observer"),
            };
        }
        if let Some(code) = f.site {
            let code = interloper::feed::sanitize::clean(code.trim());
            if code.is_empty() || code.chars().count() > 8 {
                return Err(err(line_of(text, "site"), "site is not a site code".into()));
            }
            c.site = Setting {
                value: Some(code),
                from: at("site"),
            };
        }
        if let Some(a) = f.alerts {
            let at = line_of_table(text, "alerts");
            a.check()
                .map_err(|(key, r)| err(line_in_table(text, at, key), format!("[alerts] {r}")))?;
            c.alerts = Setting {
                value: a,
                from: Source::File {
                    path: path.to_path_buf(),
                    line: at,
                },
            };
        }
        Ok(c)
    }

    /// The configuration to run under: `explicit` (from `--config`), else `$INTERLOPER_CONFIG`, else the
    /// platform's file if it exists, else the defaults. A named file that is missing is an error; the
    /// platform's file may be absent.
    pub fn load(explicit: Option<&Path>) -> anyhow::Result<Config> {
        let named = explicit.map(Path::to_path_buf).or_else(|| {
            std::env::var_os(CONFIG_ENV)
                .filter(|v| !v.is_empty())
                .map(PathBuf::from)
        });
        let path = match named {
            Some(p) => {
                if !p.exists() {
                    crate::usage!("configuration file {} does not exist", p.display());
                }
                if !p.is_file() {
                    crate::usage!("configuration file {} is not a regular file", p.display());
                }
                p
            }
            None => match default_file().filter(|p| p.is_file()) {
                Some(p) => p,
                None => return Ok(Config::defaults()),
            },
        };
        let text = std::fs::read_to_string(&path).map_err(|e| {
            super::Usage(format!("reading the configuration {}: {e}", path.display()))
        })?;
        Config::parse(&path, &text).map_err(|e| super::Usage(e.to_string()).into())
    }
}

fn resolve_path(base: &Path, p: PathBuf) -> PathBuf {
    if let Ok(rest) = p.strip_prefix("~")
        && let Some(home) = directories::BaseDirs::new()
    {
        return home.home_dir().join(rest);
    }
    if p.is_relative() { base.join(p) } else { p }
}

/// The line on which `key` is set (1 if it cannot be found).
fn line_of(text: &str, key: &str) -> usize {
    text.lines()
        .position(|l| {
            let t = l.trim_start();
            t.strip_prefix(key)
                .is_some_and(|rest| rest.trim_start().starts_with('='))
        })
        .map_or(1, |i| i + 1)
}

/// The line on which `key` is set inside the table whose header is on line `header` (the header's
/// own line if it cannot be found).
fn line_in_table(text: &str, header: usize, key: &str) -> usize {
    text.lines()
        .enumerate()
        .skip(header)
        .take_while(|(_, l)| !l.trim_start().starts_with('['))
        .find(|(_, l)| {
            l.trim_start()
                .strip_prefix(key)
                .is_some_and(|rest| rest.trim_start().starts_with('='))
        })
        .map_or(header, |(i, _)| i + 1)
}

/// The line of a `[name]` table header (1 if it cannot be found).
fn line_of_table(text: &str, name: &str) -> usize {
    let header = format!("[{name}]");
    text.lines()
        .position(|l| l.trim() == header)
        .map_or(1, |i| i + 1)
}

static CONFIG: OnceLock<Config> = OnceLock::new();

/// Set the configuration for this run (once, at start).
pub fn install(c: Config) {
    let _ = CONFIG.set(c);
}

/// The configuration of this run (the defaults if none was installed).
pub fn get() -> &'static Config {
    CONFIG.get_or_init(Config::defaults)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn parse(text: &str) -> Result<Config, ConfigError> {
        Config::parse(Path::new("/etc/x/config.toml"), text)
    }

    #[test]
    fn values_from_the_file_say_their_line_and_relative_paths_follow_the_file() {
        let c = parse(
            "# night setup\nthreads = 3\nsites = \"sites.toml\"\nobserver = \"night lead\"\n",
        )
        .unwrap();
        assert_eq!(c.threads.value, 3);
        assert_eq!(
            c.threads.from,
            Source::File {
                path: "/etc/x/config.toml".into(),
                line: 2
            }
        );
        assert_eq!(c.sites.value, Some(PathBuf::from("/etc/x/sites.toml")));
        assert_eq!(c.observer.value, "night_lead");
        assert_eq!(c.min_alt_deg.from, Source::Default);
    }

    #[test]
    fn an_unknown_key_is_refused_with_its_line() {
        let e = parse("threads = 2\n\nstate = \"/tmp\"\n").unwrap_err();
        assert_eq!(e.line, 3, "{e}");
        assert!(e.reason.contains("unknown field `state`"), "{e}");
        assert!(
            e.reason.contains("state_dir"),
            "the accepted keys are listed: {e}"
        );
    }

    #[test]
    fn out_of_range_values_are_refused_with_their_line() {
        assert_eq!(parse("\nthreads = 0\n").unwrap_err().line, 2);
        assert_eq!(parse("min_alt_deg = 95\n").unwrap_err().line, 1);
        assert_eq!(
            parse("a = 1\nobserver = \"\\u0007\"\n").unwrap_err().line,
            1
        );
        assert_eq!(parse("observer = \"\\u0007\"\n").unwrap_err().line, 1);
        assert!(
            parse("threads = \"four\"\n")
                .unwrap_err()
                .reason
                .contains("invalid type")
        );
    }

    #[test]
    fn alert_rules_come_from_their_table_and_are_checked() {
        let c =
            parse("threads = 2\n\n[alerts]\nmin_probability = 0.8\ncommand = \"cat\"\n").unwrap();
        assert_eq!(c.alerts.value.min_probability, 0.8);
        assert_eq!(c.alerts.value.command.as_deref(), Some("cat"));
        assert!(c.alerts.value.bell, "unset keys keep their defaults");
        assert_eq!(
            c.alerts.from,
            Source::File {
                path: "/etc/x/config.toml".into(),
                line: 3
            }
        );
        let e = parse("[alerts]\nmin_probability = 2\n").unwrap_err();
        assert!(e.reason.contains("min_probability 2"), "{e}");
        // The line of the key itself, not the table's header (it once said line 1).
        assert_eq!(e.line, 2, "{e}");
        let e = parse("threads = 1\n[alerts]\nbell = true\nmin_nights = 0\n").unwrap_err();
        assert_eq!(e.line, 4, "{e}");
        let e = parse("[alerts]\nmin_probability = 0\n").unwrap_err();
        assert!(e.reason.contains("must be above 0"), "{e}");
        let e = parse("[alerts]\nbeep = true\n").unwrap_err();
        assert_eq!(e.line, 2, "{e}");
        assert!(e.reason.contains("unknown field `beep`"), "{e}");
    }

    #[test]
    fn observer_names_are_cleaned_and_bounded() {
        assert_eq!(clean_name(Some(" ana lee ")), "ana_lee");
        assert_eq!(clean_name(Some(&"x".repeat(100))).chars().count(), 32);
        let e = parse("observer = \"ana\\u001b[31m\"\n").unwrap_err();
        assert!(e.reason.contains("control or invisible"), "{e}");
    }
}
