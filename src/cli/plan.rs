//! `interloper plan`: fit the candidates, then lay out tonight's follow-up at one or more telescopes,
//! most valuable visits first, as a time-ordered table or one JSON document for scheduling tools.

use super::ephem::parse_step;
use super::fit::fit_all_default;
use super::inputs::SiteArgs;
use interloper::feed::sanitize::clean;
use interloper::feed::sites::SiteTable;
use interloper::fitting::conditions::SkySlot;
use interloper::fitting::plan::{PlanOptions, PlanSite, plan_with_h};
use interloper::physics::observe::ObserverModel;
use interloper::physics::site::GroundPosition;
use interloper::physics::sky::Twilight;
use interloper::physics::time::{Instant, UtcTime, tt_to_utc};
use std::io::Write;
use std::path::PathBuf;

#[derive(Debug, clap::Args)]
pub struct PlanArgs {
    #[command(flatten)]
    pub sites: SiteArgs,
    /// A telescope to plan for, by site code (repeatable; one telescope per code).
    #[arg(long = "site", required = true, value_name = "CODE")]
    pub site: Vec<String>,
    /// The night starting on the evening of this date at each site (local mean noon to noon).
    #[arg(long, value_name = "YYYY-MM-DD", conflicts_with_all = ["from", "to"])]
    pub night: Option<String>,
    /// Or an explicit stretch, ISO 8601 UTC, the same at every site.
    #[arg(long, requires = "to")]
    pub from: Option<String>,
    #[arg(long, requires = "from")]
    pub to: Option<String>,
    /// How dark the sky must be: civil (Sun below −6°), nautical (−12°) or astronomical (−18°).
    #[arg(
        long,
        default_value = "nautical",
        value_name = "civil|nautical|astronomical"
    )]
    pub twilight: Twilight,
    /// Time grid step (s, m or h).
    #[arg(long, default_value = "10m", allow_hyphen_values = true)]
    pub step: String,
    /// Time at one pointing (a sequence of exposures).
    #[arg(long, default_value = "20m", allow_hyphen_values = true)]
    pub visit: String,
    /// Largest number of pointings spent covering one 3σ region.
    #[arg(long, default_value_t = 16)]
    pub max_pointings: usize,
    /// One JSON document instead of the table.
    #[arg(long)]
    pub json: bool,
    /// Only these objects (repeatable); default all.
    #[arg(long = "object")]
    pub objects: Vec<String>,
    /// Tracklet files or directories.
    #[arg(required = true, value_name = "PATH")]
    pub paths: Vec<PathBuf>,
}

fn longitude(p: &GroundPosition) -> f64 {
    let lon = match *p {
        GroundPosition::Geodetic { lon_deg, .. } | GroundPosition::Parallax { lon_deg, .. } => {
            lon_deg
        }
    };
    (lon + 180.0).rem_euclid(360.0) - 180.0
}

fn instant(flag: &str, text: &str) -> anyhow::Result<Instant> {
    UtcTime::parse(text)
        .and_then(|u| u.instant())
        .map_err(|e| crate::cli::Usage(format!("{flag} {}: {e}", clean(text))).into())
}

/// The telescopes and their stretches of time.
fn plan_sites(
    args: &PlanArgs,
    table: &SiteTable,
    model: &ObserverModel,
) -> anyhow::Result<Vec<PlanSite>> {
    let mut out: Vec<PlanSite> = Vec::new();
    for code in &args.site {
        let Some(site) = table.get(code) else {
            return Err(super::inputs::unknown_site(table, code));
        };
        let (from, to) = match (&args.night, &args.from, &args.to) {
            (Some(night), _, _) => {
                let noon = UtcTime::parse(&format!("{}T12:00:00Z", night.trim()))
                    .and_then(|u| u.instant())
                    .map_err(|_| {
                        crate::cli::Usage(format!(
                            "--night '{}' is not a date (YYYY-MM-DD) from 1972-01-01 to 2099-12-30",
                            clean(night)
                        ))
                    })?;
                let from = noon.plus_days(-longitude(&site.position) / 360.0);
                (from, from.plus_days(1.0))
            }
            (None, Some(a), Some(b)) => (instant("--from", a)?, instant("--to", b)?),
            _ => {
                crate::usage!("give the night (--night YYYY-MM-DD) or a stretch (--from and --to)")
            }
        };
        let span = to.tt.minus(from.tt);
        if !(span > 0.0 && span <= 3.0) {
            crate::usage!("the stretch must be positive and at most three days");
        }
        // A sky that cannot be computed is an error, not a night without darkness.
        for end in [&from, &to] {
            if let Err(e) = SkySlot::new(&site.position, end, model) {
                crate::usage!("the sky at {} cannot be computed: {e}", tt_to_utc(end.tt));
            }
        }
        if out.iter().all(|s| s.code != site.code) {
            out.push(PlanSite {
                code: site.code.clone(),
                position: site.position,
                caps: site.caps,
                from,
                to,
            });
        }
    }
    Ok(out)
}

fn options(args: &PlanArgs) -> anyhow::Result<PlanOptions> {
    let step = parse_step(&args.step).map_err(|e| crate::cli::Usage(format!("--step {e:#}")))?;
    let visit = parse_step(&args.visit).map_err(|e| crate::cli::Usage(format!("--visit {e:#}")))?;
    if !(1.0 / 1440.0..=1.0 / 24.0).contains(&step) {
        crate::usage!("--step must be between 1 minute and 1 hour");
    }
    if visit > 0.5 {
        crate::usage!("--visit must be at most 12 hours");
    }
    if args.max_pointings == 0 {
        crate::usage!("--max-pointings must be at least 1");
    }
    Ok(PlanOptions {
        twilight: args.twilight,
        step_days: step,
        visit_days: visit,
        max_pointings: args.max_pointings,
        ..PlanOptions::default()
    })
}

pub fn run(args: &PlanArgs) -> anyhow::Result<i32> {
    let table = args.sites.load()?;
    let model = ObserverModel::new();
    let sites = plan_sites(args, &table, &model)?;
    let opts = options(args)?;
    let (mut tracklets, input_errors) = super::inputs::read_tracklets(&args.paths, &table)?;
    super::inputs::keep_objects(&mut tracklets, &args.objects)?;
    let fits = fit_all_default(tracklets);
    let h: Vec<Option<f64>> = fits.iter().map(|f| f.h_mag).collect();
    let failed = fits.iter().filter(|f| f.status == "failed").count();
    for f in fits.iter().filter(|f| f.status == "failed") {
        eprintln!(
            "{}: not fitted: {}",
            clean(&f.object),
            clean(f.error.as_deref().unwrap_or(""))
        );
    }
    let result = plan_with_h(&fits, &h, &sites, &opts, &model);
    let mut out = std::io::BufWriter::new(std::io::stdout().lock());
    if args.json {
        serde_json::to_writer_pretty(&mut out, &result)?;
        out.write_all(b"\n")?;
    } else {
        out.write_all(super::plantext::table(&result).as_bytes())?;
    }
    out.flush()?;
    Ok(if failed > 0 || input_errors > 0 { 1 } else { 0 })
}
