//! `interloper ephem`: fit the given tracklets, then predict where each object will be from a site over a
//! time range: position, rates, brightness, altitude, observability and the uncertainty region.

use super::ephem_request::windows;
use super::fit::fit_all_default;
use super::inputs::SiteArgs;
use anyhow::{Context, bail};
use interloper::feed::sanitize::clean;
use interloper::fitting::conditions::{Capabilities, DEFAULT_EXPOSURE_S, RowOptions};
use interloper::fitting::ephemeris::{EphemerisPoint, point_with};
use interloper::fitting::fit::FitResult;
use interloper::fitting::kinds::FitStatus;
use interloper::physics::observe::ObserverModel;
use interloper::physics::sky::Twilight;
use interloper::physics::time::{Instant, UtcTime, tt_to_utc};
use std::io::Write;
use std::path::PathBuf;

#[derive(Debug, clap::Args)]
pub struct EphemArgs {
    #[command(flatten)]
    pub sites: SiteArgs,
    /// Site code to predict for (the built-in demo sites, --sites or --site-codes).
    #[arg(long)]
    pub site: String,
    /// First time, ISO 8601 UTC (e.g. 2027-03-21T10:00:00Z).
    #[arg(long)]
    pub from: String,
    /// Last time, ISO 8601 UTC (included).
    #[arg(long)]
    pub to: String,
    /// Step: a number with s, m, h or d (e.g. 10m, 1h, 1d).
    #[arg(long, default_value = "1h", allow_hyphen_values = true)]
    pub step: String,
    /// One JSON object per time step instead of the table.
    #[arg(long)]
    pub json: bool,
    /// Lowest altitude counted as observable (degrees); default the site's own limit (20° unless
    /// the site table says otherwise).
    #[arg(long, allow_negative_numbers = true)]
    pub min_alt: Option<f64>,
    /// How dark the sky must be: civil (Sun below −6°), nautical (−12°) or astronomical (−18°).
    #[arg(
        long,
        default_value = "nautical",
        value_name = "civil|nautical|astronomical"
    )]
    pub twilight: Twilight,
    /// Exposure time for the trail length (seconds).
    #[arg(long, default_value_t = DEFAULT_EXPOSURE_S, value_name = "SECONDS")]
    pub exposure: f64,
    /// Only these objects (repeatable); default all.
    #[arg(long = "object")]
    pub objects: Vec<String>,
    /// Also write a follow-up request: PREFIX.txt (for people) and PREFIX.json (for scheduling tools).
    #[arg(long, value_name = "PREFIX")]
    pub request: Option<PathBuf>,
    /// Tracklet files or directories.
    #[arg(required = true, value_name = "PATH")]
    pub paths: Vec<PathBuf>,
}

/// Parse 10m, 1h, 1d, 30s into days.
pub fn parse_step(s: &str) -> anyhow::Result<f64> {
    let s = s.trim();
    let (num, unit) = s.split_at(s.find(|c: char| c.is_ascii_alphabetic()).unwrap_or(s.len()));
    let v: f64 = num
        .trim()
        .parse()
        .with_context(|| format!("'{s}' is not a duration (e.g. 10m, 1h, 1d)"))?;
    let days = match unit {
        "s" => v / 86_400.0,
        "m" | "min" => v / 1440.0,
        "h" => v / 24.0,
        "d" => v,
        _ => bail!("'{s}': the unit must be s, m, h or d"),
    };
    if !(days > 0.0 && days.is_finite()) {
        bail!("'{s}' must be positive");
    }
    Ok(days)
}

pub(super) fn table(points: &[EphemerisPoint]) -> String {
    let mut s = String::new();
    let Some(first) = points.first() else {
        return s;
    };
    s.push_str(&format!("== {}\n", clean(&first.object)));
    s.push_str("time (UTC)                  RA°        Dec°      RA h:m:s     Dec d:m:s     \"/min E  \"/min N   alt°  airm  elong° moon° lit   V     trail\"  3σ major\" minor\" PA°  obs\n");
    for p in points {
        let k = &p.sky;
        s.push_str(&format!(
            "{:<26} {:>10} {:>+10.5} {:>12} {:>12} {:>8.3} {:>8.3} {:>6.1} {:>5} {:>7.1} {:>5.0} {:>4.2} {:>5}{} {:>6.1} {:>9} {:>7} {:>4} {}{}{}\n",
            p.time_utc,
            interloper::physics::sexagesimal::ra_deg_text(p.ra_deg, 5),
            p.dec_deg,
            k.ra_hms,
            k.dec_dms,
            p.ra_rate_arcsec_min,
            p.dec_rate_arcsec_min,
            p.alt_deg.unwrap_or(f64::NAN),
            k.airmass.map_or("-".into(), |x| format!("{x:.2}")),
            p.elong_deg,
            k.moon_sep_deg,
            k.moon_illum,
            p.v_mag.map_or("-".into(), |v| format!("{v:.1}")),
            if k.bright_enough == Some(false) { "!" } else { " " },
            k.trail_arcsec,
            p.unc_major_arcsec.map_or("-".into(), |v| format!("{v:.1}")),
            p.unc_minor_arcsec.map_or("-".into(), |v| format!("{v:.1}")),
            p.unc_pa_deg.map_or("-".into(), |v| format!("{v:.0}")),
            if p.observable { "yes" } else { "no" },
            if p.sun_caution { "  SUN" } else { "" },
            if k.moon_caution { "  MOON" } else { "" }
        ));
    }
    let w = windows(points);
    if w.is_empty() {
        s.push_str(
            "not observable in this range (dark sky and the object above the minimum altitude)\n",
        );
    }
    for (a, b) in w {
        s.push_str(&format!("observable {a} .. {b}\n"));
    }
    if let Some(k) = points.first().map(|p| &p.sky) {
        s.push_str(&format!(
            "dark = Sun below {}° ({} twilight); trail for {} s exposures; V marked ! is fainter than \
             the site's limit {:.1}\n",
            k.twilight.sun_limit_deg(),
            k.twilight,
            k.exposure_s,
            k.limiting_mag
        ));
    }
    if points.iter().any(|p| p.sky.moon_caution) {
        s.push_str("CAUTION: a bright Moon is near the object at times marked MOON. Follow your site's own limits.\n");
    }
    if points.iter().any(|p| p.sun_caution) {
        s.push_str("CAUTION: within 45° of the Sun at times marked SUN. Check your site's own solar-avoidance limits and procedures before pointing.\n");
    }
    s
}

pub fn run(args: &EphemArgs) -> anyhow::Result<i32> {
    let sites = args.sites.load()?;
    let Some(site) = sites.get(&args.site) else {
        return Err(super::inputs::unknown_site(&sites, &args.site));
    };
    let row_opts = row_options(args, site.caps)?;
    let site = site.position;
    let (from, offsets) = time_grid(args)?;
    let n = offsets.len();
    let (mut tracklets, input_errors) = super::inputs::read_tracklets(&args.paths, &sites)?;
    super::inputs::keep_objects(&mut tracklets, &args.objects)?;
    // The cap is on the whole run, every object's rows together.
    if n.saturating_mul(tracklets.len()) > MAX_ROWS {
        crate::usage!(
            "{n} steps for {} objects is {} rows, more than the {MAX_ROWS} of one run: choose objects \
             with --object, a shorter range or a longer step",
            tracklets.len(),
            n.saturating_mul(tracklets.len())
        );
    }
    let results = fit_all_default(tracklets);
    let mut uncomputable: Vec<String> = Vec::new();
    let model = ObserverModel::new();
    let mut out = std::io::BufWriter::new(std::io::stdout().lock());
    let mut all: Vec<EphemerisPoint> = Vec::new();
    let mut failed = 0;
    // Each object's status and note, for the request.
    let mut standing: Vec<Standing> = Vec::new();
    for fit in &results {
        if fit.status == "failed" {
            eprintln!(
                "{}: not fitted: {}",
                clean(&fit.object),
                clean(fit.error.as_deref().unwrap_or(""))
            );
            failed += 1;
            continue;
        }
        let mut points = Vec::with_capacity(n);
        for &dt in &offsets {
            let inst = from.plus_days(dt);
            let utc = tt_to_utc(inst.tt).to_string();
            match point_with(fit, &inst, utc, &site, &model, fit.h_mag, &row_opts) {
                Some(p) => points.push(p),
                None if uncomputable.len() < 3 => {
                    uncomputable.push(format!("{} at {}", clean(&fit.object), tt_to_utc(inst.tt)))
                }
                None => uncomputable.push(String::new()),
            }
        }
        let note = fit_note(fit);
        write_rows(&mut out, args.json, fit, &points, note.as_deref())?;
        if !points.is_empty() {
            standing.push((fit.object.clone(), fit.status, note));
        }
        all.extend(points);
    }
    out.flush()?;
    if let Some(prefix) = &args.request {
        super::ephem_request::write_request(args, prefix, &all, &standing)?;
    }
    // A time that cannot be computed is an error, not a silent gap in the table.
    if !uncomputable.is_empty() {
        let shown: Vec<&str> = uncomputable
            .iter()
            .filter(|u| !u.is_empty())
            .map(String::as_str)
            .collect();
        eprintln!(
            "error: {} time(s) could not be computed (outside the dates the Earth and time models \
             cover?), e.g. {}",
            uncomputable.len(),
            shown.join("; ")
        );
    }
    Ok(
        if failed > 0 || input_errors > 0 || !uncomputable.is_empty() {
            1
        } else {
            0
        },
    )
}

/// An object's status and note, as its rows in the request carry them.
pub(super) type Standing = (String, FitStatus, Option<String>);

/// The row options from the site's limits and the command line's, checked.
fn row_options(args: &EphemArgs, caps: Capabilities) -> anyhow::Result<RowOptions> {
    if !(args.exposure > 0.0 && args.exposure <= 86_400.0) {
        crate::usage!(
            "--exposure {} must be between 0 and 86400 seconds",
            args.exposure
        );
    }
    if let Some(a) = args.min_alt
        && !(-90.0..90.0).contains(&a)
    {
        crate::usage!("--min-alt {a} is not an altitude");
    }
    Ok(RowOptions {
        caps: Capabilities {
            min_alt_deg: args.min_alt.unwrap_or(caps.min_alt_deg),
            ..caps
        },
        twilight: args.twilight,
        exposure_s: args.exposure,
    })
}

/// The first instant and the offsets (days) of every row, `--to` included.
fn time_grid(args: &EphemArgs) -> anyhow::Result<(Instant, Vec<f64>)> {
    let time = |flag: &str, v: &str| match UtcTime::parse(v).and_then(|u| u.instant()) {
        Ok(t) => Ok(t),
        Err(e) => Err(crate::cli::Usage(format!("{flag} {}: {e}", clean(v)))),
    };
    let from = time("--from", &args.from)?;
    let to = time("--to", &args.to)?;
    // A table that starts past the Earth model's dates has nothing to compute: a usage error, as a
    // time before the leap-second table is (one that runs past them writes what it can, exit 1).
    if let Err(e) = interloper::physics::earth::covers(from.tdb) {
        crate::usage!("--from {}: {e}", clean(&args.from));
    }
    let step = parse_step(&args.step).map_err(|e| crate::cli::Usage(format!("--step {e:#}")))?;
    let span = to.tt.minus(from.tt);
    if span < 0.0 {
        crate::usage!("--to is before --from");
    }
    let Some(offsets) = offsets_days(span, step) else {
        crate::usage!(
            "from --from to --to every --step is more than the {MAX_ROWS} rows of one run (or a step \
             under a millisecond)"
        );
    };
    Ok((from, offsets))
}

/// One object's rows: JSON lines that each say how far their orbit can be trusted, or a table with
/// its note.
fn write_rows(
    out: &mut impl Write,
    json: bool,
    fit: &FitResult,
    points: &[EphemerisPoint],
    note: Option<&str>,
) -> anyhow::Result<()> {
    if json {
        for p in points {
            // Each row says how far its orbit can be trusted (a poor fit's rows look as exact).
            let mut row = serde_json::to_value(p)?;
            row["status"] = serde_json::json!(fit.status);
            row["note"] = serde_json::json!(note);
            serde_json::to_writer(&mut *out, &row)?;
            out.write_all(b"\n")?;
        }
    } else {
        out.write_all(table(points).as_bytes())?;
        if let Some(n) = note {
            out.write_all(format!("note: {n}\n").as_bytes())?;
        }
    }
    Ok(())
}

/// What a follow-up table must say about its orbit: a fit that is not `ok`, or whose answer the
/// population model set (None for a sound fit whose positions decided).
fn fit_note(fit: &FitResult) -> Option<String> {
    let why = match fit.status {
        FitStatus::Ok => None,
        FitStatus::Undetermined => Some(
            "fit is undetermined (its elements are the population model's, not measured)".into(),
        ),
        FitStatus::PoorFit => Some(format!(
            "fit is poor-fit: no orbit fits these positions as their errors allow ({}); the path \
             shown may be far from the object's",
            clean(&fit.poor_fit.join("; "))
        )),
        FitStatus::Failed => Some("fit failed".into()),
    };
    // The prior decided only where a probability was worked out at all.
    let prior = fit.prior_dominated && fit.bayes_factor.is_some();
    match (why, prior) {
        (Some(w), true) => Some(format!("{w}; answer set by the prior")),
        (Some(w), false) => Some(w),
        (None, true) => Some("answer set by the prior".into()),
        (None, false) => None,
    }
}

/// The times of the table, days after `--from`: every `step` from `--from`, and `--to` itself where
/// the step does not land on it (both ends are included; a dusk-to-dawn request once lost its last
/// time).
/// None where that is more than `MAX_ROWS` times.
fn offsets_days(span: f64, step: f64) -> Option<Vec<f64>> {
    if !(span.is_finite() && step.is_finite() && span >= 0.0 && step > 0.0) {
        return None;
    }
    // A time within a millisecond of `--to` is `--to`.
    let tol = 1e-3 / 86_400.0;
    let n = ((span + tol) / step).floor();
    if n >= MAX_ROWS as f64 {
        return None;
    }
    let mut out: Vec<f64> = (0..=n as usize).map(|k| k as f64 * step).collect();
    if out.last().is_some_and(|last| span - last > tol) {
        out.push(span);
    }
    (out.len() <= MAX_ROWS).then_some(out)
}

/// Rows one `ephem` run writes at most (all objects together): a month at one-minute steps for
/// four objects.
pub const MAX_ROWS: usize = 200_000;

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_table_ends_at_to_also_where_the_step_does_not_land_on_it() {
        let minute = 1.0 / 1440.0;
        let got = offsets_days(60.0 * minute, 25.0 * minute).unwrap();
        let minutes: Vec<f64> = got
            .iter()
            .map(|d| (d / minute * 1e6).round() / 1e6)
            .collect();
        assert_eq!(minutes, vec![0.0, 25.0, 50.0, 60.0]);
        // A step that lands on `--to` adds nothing after it; a zero span is one row.
        assert_eq!(offsets_days(60.0 * minute, 30.0 * minute).unwrap().len(), 3);
        assert_eq!(offsets_days(0.0, minute).unwrap(), vec![0.0]);
        assert!(offsets_days(1.0, 1.0 / MAX_ROWS as f64).is_none());
    }
}
