//! `interloper origin`: fit the given tracklets and print where each unbound candidate comes from
//! (original and future orbits, arrival, Galactic velocity, kinematic population, Galactic orbit).

use super::inputs::{PopulationArgs, SiteArgs};
use interloper::feed::sanitize::clean;
use interloper::fitting::batch::fit_all;
use interloper::fitting::fit::{FitOptions, FitResult};
use interloper::fitting::origin::{MAX_SAMPLES, MIN_PROBABILITY, OriginOptions};
use interloper::origin_text::{heading, rz_drawing, sheet_lines};
use std::io::Write;
use std::path::PathBuf;

#[derive(Debug, clap::Args)]
pub struct OriginArgs {
    #[command(flatten)]
    pub sites: SiteArgs,
    #[command(flatten)]
    pub population: PopulationArgs,
    /// Only these objects (repeatable); default every candidate with P(unbound) ≥ 0.01.
    #[arg(long = "object")]
    pub objects: Vec<String>,
    /// One JSON object per object per line: the fit record with its `origin` sheet.
    #[arg(long)]
    pub json: bool,
    /// The Sun's motion relative to the local standard of rest, U,V,W in km/s (default: the
    /// population model's).
    #[arg(long, value_name = "U,V,W", allow_hyphen_values = true)]
    pub solar_motion: Option<String>,
    /// Orbit samples carried through the planets per object (at most 200; half of them are also
    /// followed through the Galaxy).
    #[arg(long, default_value_t = 48, allow_negative_numbers = true)]
    pub samples: usize,
    /// Worker threads (default: the machine's cores).
    #[arg(long, value_parser = super::fit::threads_flag)]
    pub threads: Option<usize>,
    /// Tracklet files or directories.
    #[arg(required = true, value_name = "PATH")]
    pub paths: Vec<PathBuf>,
}

/// Parse "U,V,W" (km/s).
pub fn parse_solar_motion(s: &str) -> anyhow::Result<[f64; 3]> {
    let v: Vec<f64> = s
        .split(',')
        .map(|p| p.trim().parse::<f64>())
        .collect::<Result<_, _>>()
        .map_err(|_| {
            super::Usage(format!(
                "--solar-motion '{}' is not U,V,W in km/s",
                clean(s)
            ))
        })?;
    match v.as_slice() {
        [u, v, w] if [u, v, w].iter().all(|x| x.is_finite() && x.abs() < 1000.0) => {
            Ok([*u, *v, *w])
        }
        _ => crate::usage!(
            "--solar-motion '{}' needs three numbers U,V,W in km/s, each within ±1000 (e.g. 11.1,12.24,7.25)",
            clean(s)
        ),
    }
}

impl OriginArgs {
    fn options(&self) -> anyhow::Result<FitOptions> {
        if self.samples == 0 || self.samples > MAX_SAMPLES {
            crate::usage!("--samples {} is outside 1..={MAX_SAMPLES}", self.samples);
        }
        let population = self.population.load()?;
        let mut origin = OriginOptions::for_model(&population);
        if let Some(s) = &self.solar_motion {
            origin.frame.solar_motion_km_s = parse_solar_motion(s)?;
        }
        origin.samples = self.samples;
        // A named object gets its sheet whatever its P.
        origin.any_probability = !self.objects.is_empty();
        // Half of the samples flown, which are whole pairs (an odd count is rounded up).
        origin.galactic_samples = self.samples.div_ceil(2);
        Ok(FitOptions {
            population,
            origin: Some(origin),
            keep_samples: false,
            ..FitOptions::default()
        })
    }
}

fn text(r: &FitResult) -> String {
    let mut s = heading(r) + "\n";
    match &r.origin {
        Some(o) => {
            for l in sheet_lines(o) {
                s.push_str(&format!("  {l}\n"));
            }
            if !o.path.is_empty() {
                let sun = (o.r0_kpc, o.z0_kpc);
                for l in rz_drawing(&o.path, sun, 60, 8) {
                    s.push_str(&format!("    {l}\n"));
                }
            }
        }
        None if r.status == "failed" => s.push_str(&format!(
            "  no orbit: {}\n",
            r.error.as_deref().map_or("-".into(), clean)
        )),
        None => s.push_str(&format!(
            "  P(unbound) below {MIN_PROBABILITY}: no origin sheet\n"
        )),
    }
    s
}

pub fn run(args: &OriginArgs) -> anyhow::Result<i32> {
    let sites = args.sites.load()?;
    let options = args.options()?;
    let (mut tracklets, input_errors) = super::inputs::read_tracklets(&args.paths, &sites)?;
    super::inputs::keep_objects(&mut tracklets, &args.objects)?;
    let threads = args.threads.unwrap_or(super::config::get().threads.value);
    let chosen = !args.objects.is_empty();
    let all = fit_all(tracklets, &options, threads);
    let failed = all.iter().filter(|r| r.status == "failed").count();
    for r in all.iter().filter(|r| r.status == "failed" && !chosen) {
        eprintln!(
            "{}: no orbit: {}",
            clean(&r.object),
            r.error.as_deref().map_or("-".into(), clean)
        );
    }
    let results: Vec<FitResult> = all
        .into_iter()
        .filter(|r| chosen || r.origin.is_some())
        .collect();
    let mut out = std::io::BufWriter::new(std::io::stdout().lock());
    for r in &results {
        if args.json {
            serde_json::to_writer(&mut out, r)?;
            out.write_all(b"\n")?;
        } else {
            out.write_all(text(r).as_bytes())?;
        }
    }
    if results.is_empty() && !args.json {
        writeln!(
            out,
            "no candidate with P(unbound) ≥ {MIN_PROBABILITY}: no origin sheets"
        )?;
    }
    out.flush()?;
    Ok(if failed > 0 || input_errors > 0 { 1 } else { 0 })
}
