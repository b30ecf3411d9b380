//! `interloper fit`: batch fit of files, ranked table or JSON lines.

use super::inputs::{PopulationArgs, SiteArgs, expand, read_file};
use interloper::feed::tracklets::Limits;
use interloper::fitting::batch::fit_all;
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
    /// Speed cap at infinity for ranging (km/s).
    #[arg(long, default_value_t = 100.0, value_name = "KM_S")]
    pub v_cap: f64,
    /// Seed for ranging jitter and orbit sampling (results are reproducible for a given seed).
    #[arg(long, default_value_t = 0x5EED)]
    pub seed: u64,
    /// Do not inflate uncertainties of many same-night positions from one site.
    #[arg(long)]
    pub no_night_inflation: bool,
    /// With --json: the Sun's motion relative to the local standard of rest for the origin sheets,
    /// U,V,W in km/s (default: the population model's).
    #[arg(long, value_name = "U,V,W")]
    pub solar_motion: Option<String>,
    /// Worker threads (default: the machine's cores).
    #[arg(long)]
    pub threads: Option<usize>,
    /// Files or directories of tracklet files.
    #[arg(required = true, value_name = "PATH")]
    pub paths: Vec<PathBuf>,
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
        let mut o = FitOptions {
            // The origin sheet is part of the JSON record only (the table has no room for it).
            origin: if self.json {
                let mut o = interloper::fitting::origin::OriginOptions::for_model(&population);
                if let Some(s) = &self.solar_motion {
                    o.frame.solar_motion_km_s = super::origin::parse_solar_motion(s)?;
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
    let files = expand(&args.paths)?;
    let limits = Limits::default();
    let mut tracklets = Vec::new();
    let mut input_errors = 0;
    for f in &files {
        let intake = read_file(f, &sites, &limits);
        for e in &intake.errors {
            eprintln!("rejected: {e}");
        }
        input_errors += intake.errors.len();
        tracklets.extend(intake.tracklets);
    }
    let tracklets = interloper::feed::tracklets::merge(tracklets);
    let threads = args
        .threads
        .unwrap_or_else(|| std::thread::available_parallelism().map_or(1, |n| n.get()));
    let mut results = fit_all(tracklets, &options, threads);
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
