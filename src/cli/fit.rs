//! `interloper fit`: batch fit of files, ranked table or JSON lines.

use super::inputs::{PopulationArgs, SiteArgs, expand, read_files};
use interloper::feed::tracklets::Limits;
use interloper::fitting::batch::{fit_all, fit_all_observed};
use interloper::fitting::fit::{FitOptions, MethodChoice, PerturbChoice, rank};
use std::io::Write;
use std::path::PathBuf;

#[derive(Debug, clap::Args)]
pub struct FitArgs {
    #[command(flatten)]
    pub sites: SiteArgs,
    #[command(flatten)]
    pub population: PopulationArgs,
    /// One JSON object per tracklet per line instead of the table.
    #[arg(long)]
    pub json: bool,
    /// Force the ranging method for every tracklet.
    #[arg(long, value_enum, default_value = "auto")]
    pub method: Method,
    /// Planetary perturbations: by arc length and Earth distance, always, or never.
    #[arg(long, value_enum, default_value = "auto")]
    pub perturbations: Perturb,
    /// Speed cap at infinity of the orbit searches: one night, the range profile, grid ranging (km/s).
    #[arg(long, default_value_t = interloper::fitting::ranging::DEFAULT_V_CAP_KM_S, value_name = "KM_S", value_parser = v_cap_flag)]
    pub v_cap: f64,
    /// Seed for ranging jitter and orbit sampling (results are reproducible for a given seed).
    #[arg(long, default_value_t = interloper::fitting::ranging::DEFAULT_SEED)]
    pub seed: u64,
    /// Do not inflate uncertainties of many same-night positions from one site.
    #[arg(long)]
    pub no_night_inflation: bool,
    /// With --json: the Sun's motion relative to the local standard of rest for the origin sheets,
    /// U,V,W in km/s (default: the population model's).
    #[arg(long, value_name = "U,V,W", allow_hyphen_values = true)]
    pub solar_motion: Option<String>,
    /// Fit only share K of N of the objects (numbered from 1): N runs with 1/N … N/N together give
    /// exactly the records of one unsharded run. Every run reads all inputs.
    #[arg(long, value_name = "K/N", allow_hyphen_values = true)]
    pub shard: Option<super::shard::Shard>,
    /// Worker threads (default: the machine's cores).
    #[arg(long, value_parser = threads_flag)]
    pub threads: Option<usize>,
    /// Files or directories of tracklet files.
    #[arg(required = true, value_name = "PATH")]
    pub paths: Vec<PathBuf>,
}

/// `--threads`: as the config file's `threads`, 1 to 1024.
pub fn threads_flag(text: &str) -> Result<usize, String> {
    match text.trim().parse::<usize>() {
        Ok(n) if (1..=1024).contains(&n) => Ok(n),
        _ => Err(format!(
            "'{}' is not between 1 and 1024",
            interloper::feed::sanitize::clean(text)
        )),
    }
}

/// `--v-cap`: a speed at infinity the orbit searches can reach, 1 to 3000 km/s (the built-in model's
/// interstellar bodies come in at tens of km/s, a few per cent above 100; NaN or 0 would leave no
/// orbit, or every one).
fn v_cap_flag(text: &str) -> Result<f64, String> {
    match text.trim().parse::<f64>() {
        Ok(v) if (1.0..=3000.0).contains(&v) => Ok(v),
        _ => Err(format!(
            "'{}' is not a speed between 1 and 3000 km/s",
            interloper::feed::sanitize::clean(text)
        )),
    }
}

#[derive(Debug, Clone, Copy, clap::ValueEnum)]
pub enum Method {
    Auto,
    Ranging,
}

#[derive(Debug, Clone, Copy, clap::ValueEnum)]
pub enum Perturb {
    Auto,
    On,
    Off,
}

impl FitArgs {
    pub fn options(&self) -> anyhow::Result<FitOptions> {
        let population = self.population.load()?;
        // A bad value is a usage error in either form, though only the JSON carries the origin sheet.
        let solar_motion = self
            .solar_motion
            .as_deref()
            .map(super::origin::parse_solar_motion)
            .transpose()?;
        let mut o = FitOptions {
            // The origin sheet is part of the JSON record only (the table has no room for it).
            origin: if self.json {
                let mut o = interloper::fitting::origin::OriginOptions::for_model(&population);
                if let Some(v) = solar_motion {
                    o.frame.solar_motion_km_s = v;
                }
                Some(o)
            } else {
                None
            },
            population,
            method: match self.method {
                Method::Auto => MethodChoice::Auto,
                Method::Ranging => MethodChoice::Ranging,
            },
            perturbations: match self.perturbations {
                Perturb::Auto => PerturbChoice::Auto,
                Perturb::On => PerturbChoice::On,
                Perturb::Off => PerturbChoice::Off,
            },
            inflate_nights: !self.no_night_inflation,
            keep_samples: false,
            seed: self.seed,
            ..FitOptions::default()
        };
        o.ranging.v_cap_km_s = self.v_cap;
        o.ranging.seed = self.seed;
        Ok(o)
    }
}

/// Fit with default options on all cores (input order kept).
pub fn fit_all_default(
    tracklets: Vec<interloper::fitting::input::Tracklet>,
) -> Vec<interloper::fitting::fit::FitResult> {
    let threads = std::thread::available_parallelism().map_or(1, |n| n.get());
    // Ephemerides need no origin sheet.
    let opts = FitOptions {
        origin: None,
        ..FitOptions::default()
    };
    fit_all(tracklets, &opts, threads)
}

pub fn run(args: &FitArgs) -> anyhow::Result<i32> {
    let sites = args.sites.load()?;
    let options = args.options()?;
    let inputs = expand(&args.paths)?;
    if let Some(note) = inputs.skipped_note() {
        eprintln!("{note}");
    }
    let limits = Limits::default();
    let mut tracklets = Vec::new();
    let mut input_errors = 0;
    let threads = args.threads.unwrap_or(super::config::get().threads.value);
    for e in &inputs.refused {
        eprintln!("rejected: {e}");
    }
    input_errors += inputs.refused.len();
    for intake in read_files(&inputs.files, &sites, &limits, threads) {
        for e in &intake.errors {
            eprintln!("rejected: {e}");
        }
        input_errors += intake.errors.len();
        tracklets.extend(intake.tracklets);
    }
    let mut tracklets = interloper::feed::tracklets::merge(tracklets);
    if tracklets.is_empty() && input_errors == 0 {
        eprintln!("{}", super::inputs::nothing_found(&args.paths));
    }
    if let Some(shard) = args.shard {
        tracklets.retain(|t| shard.holds(&t.object));
    }
    let mut results = with_progress(tracklets, &options, threads);
    rank(&mut results);
    let stdout = std::io::stdout();
    let mut out = std::io::BufWriter::new(stdout.lock());
    if args.json {
        // Records are turned into text on every worker (a survey night is tens of thousands of them),
        // in blocks, and written in rank order.
        for block in results.chunks(4096) {
            let per = block.len().div_ceil(threads.max(1)).max(1);
            let texts: Vec<Vec<u8>> = std::thread::scope(|s| {
                let handles: Vec<_> = block
                    .chunks(per)
                    .map(|part| {
                        s.spawn(move || {
                            let mut buf = Vec::with_capacity(part.len() * 4096);
                            for r in part {
                                if serde_json::to_writer(&mut buf, r).is_ok() {
                                    buf.push(b'\n');
                                }
                            }
                            buf
                        })
                    })
                    .collect();
                handles
                    .into_iter()
                    .map(|h| h.join().unwrap_or_default())
                    .collect()
            });
            for t in texts {
                out.write_all(&t)?;
            }
        }
    } else {
        out.write_all(interloper::report::ranked_table(&results).as_bytes())?;
    }
    out.flush()?;
    let failed = results.iter().filter(|r| r.status == "failed").count();
    Ok(if failed > 0 || input_errors > 0 { 1 } else { 0 })
}

/// Fewer tracklets than this finish before a progress bar would be worth drawing.
const PROGRESS_FROM: usize = 200;

/// Fit in parallel, with a progress bar on stderr when stderr is a terminal and the batch is long
/// (nothing otherwise: a pipeline's log stays clean).
fn with_progress(
    tracklets: Vec<interloper::fitting::input::Tracklet>,
    options: &FitOptions,
    threads: usize,
) -> Vec<interloper::fitting::fit::FitResult> {
    use std::io::IsTerminal;
    if tracklets.len() < PROGRESS_FROM || !std::io::stderr().is_terminal() {
        return fit_all(tracklets, options, threads);
    }
    let bar = indicatif::ProgressBar::new(tracklets.len() as u64);
    if let Ok(style) = indicatif::ProgressStyle::with_template(
        "fitting {pos}/{len} tracklets [{bar:30}] {elapsed} so far, about {eta} left",
    ) {
        bar.set_style(style.progress_chars("=> "));
    }
    let results = fit_all_observed(tracklets, options, threads, &|n| bar.set_position(n as u64));
    bar.finish_and_clear();
    results
}
