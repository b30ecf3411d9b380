//! `interloper config`: the effective configuration and where each value came from.

use super::config::{Config, Setting, default_file, get};
use std::io::Write;
use std::path::{Path, PathBuf};

#[derive(Debug, clap::Args)]
pub struct ConfigArgs {
    /// One JSON object: each key with its value and source.
    #[arg(long)]
    pub json: bool,
}

fn path_text(p: &Option<PathBuf>) -> String {
    p.as_deref()
        .map_or_else(|| "(none)".to_string(), |p| p.display().to_string())
}

/// (key, value as text, value as JSON, source) for every setting.
fn rows(c: &Config) -> Vec<(&'static str, String, serde_json::Value, String)> {
    fn opt(
        key: &'static str,
        s: &Setting<Option<PathBuf>>,
    ) -> (&'static str, String, serde_json::Value, String) {
        let json = s
            .value
            .as_deref()
            .map_or(serde_json::Value::Null, |p| p.display().to_string().into());
        (key, path_text(&s.value), json, s.from.to_string())
    }
    vec![
        opt("sites", &c.sites),
        opt("site_codes", &c.site_codes),
        opt("population", &c.population),
        (
            "state_dir",
            c.state_dir.value.display().to_string(),
            c.state_dir.value.display().to_string().into(),
            c.state_dir.from.to_string(),
        ),
        opt("keymap", &c.keymap),
        (
            "threads",
            c.threads.value.to_string(),
            c.threads.value.into(),
            c.threads.from.to_string(),
        ),
        (
            "min_alt_deg",
            c.min_alt_deg.value.to_string(),
            c.min_alt_deg.value.into(),
            c.min_alt_deg.from.to_string(),
        ),
        (
            "observer",
            c.observer.value.clone(),
            c.observer.value.clone().into(),
            c.observer.from.to_string(),
        ),
        (
            "site",
            c.site
                .value
                .clone()
                .unwrap_or_else(|| "(last site of each candidate)".into()),
            c.site
                .value
                .clone()
                .map_or(serde_json::Value::Null, serde_json::Value::from),
            c.site.from.to_string(),
        ),
        alerts(&c.alerts),
    ]
}

fn alerts(
    a: &Setting<interloper::feed::alerts::AlertRules>,
) -> (&'static str, String, serde_json::Value, String) {
    let r = &a.value;
    let text = format!(
        "P ≥ {} ({}), new unbound from {} nights; bell {}, flash {}, command {}{}",
        r.min_probability,
        if r.data_decided {
            "data-decided"
        } else {
            "prior allowed"
        },
        r.min_nights,
        if r.bell { "on" } else { "off" },
        if r.flash { "on" } else { "off" },
        r.command.as_deref().unwrap_or("(none)"),
        if r.quiet { "; quiet" } else { "" }
    );
    let json = serde_json::json!({
        "min_probability": r.min_probability, "data_decided": r.data_decided,
        "min_nights": r.min_nights, "bell": r.bell, "flash": r.flash,
        "command": r.command, "quiet": r.quiet,
    });
    ("alerts", text, json, a.from.to_string())
}

fn file_line(c: &Config) -> String {
    match (&c.file, default_file()) {
        (Some(f), _) => format!("configuration file: {}", f.display()),
        (None, Some(d)) => format!(
            "configuration file: none ({} does not exist; built-in defaults)",
            d.display()
        ),
        (None, None) => "configuration file: none (no home directory; built-in defaults)".into(),
    }
}

pub fn run(args: &ConfigArgs) -> anyhow::Result<i32> {
    let c = get();
    let rows = rows(c);
    let mut out = std::io::stdout().lock();
    if args.json {
        let mut values = serde_json::Map::new();
        for (key, _, value, from) in &rows {
            values.insert(
                (*key).to_string(),
                serde_json::json!({ "value": value, "from": from }),
            );
        }
        let doc = serde_json::json!({
            "file": c.file.as_deref().map(Path::display).map(|d| d.to_string()),
            "values": values,
        });
        writeln!(out, "{doc}")?;
        return Ok(0);
    }
    writeln!(out, "{}", file_line(c))?;
    let w = rows.iter().map(|r| r.1.chars().count()).max().unwrap_or(0);
    for (key, text, _, from) in rows {
        writeln!(out, "{key:<12} {text:<w$}  {from}")?;
    }
    writeln!(
        out,
        "A flag on the command line wins over every line above."
    )?;
    Ok(0)
}
