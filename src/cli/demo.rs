//! `interloper demo`: replay the bundled demo night into a fresh temporary directory, file by file in
//! arrival order and at an accelerated pace, while the console (or the headless watcher) watches it.

use super::watch::{WatchArgs, run_with};
use anyhow::Context;
use std::path::PathBuf;
use std::sync::Arc;
use std::sync::atomic::{AtomicBool, Ordering};
use std::time::Duration;

#[derive(Debug, clap::Args)]
pub struct DemoArgs {
    /// Pace: 1 is about a file a second; 10 is ten times faster.
    #[arg(long, default_value_t = 1.0)]
    pub speed: f64,
    /// The demo feed to replay.
    #[arg(long, value_name = "DIR", default_value = concat!(env!("CARGO_MANIFEST_DIR"), "/sample_feeds/demo_night"))]
    pub feed: PathBuf,
    /// Where decisions go (default: a fresh folder beside the replay, so the demo leaves no trace).
    #[arg(long, value_name = "DIR")]
    pub state: Option<PathBuf>,
    /// Key map file.
    #[arg(long, value_name = "FILE")]
    pub keymap: Option<PathBuf>,
    /// No console: print results (add --json for JSON lines); stops when the replay is done and idle.
    #[arg(long)]
    pub headless: bool,
    #[arg(long)]
    pub json: bool,
    #[command(flatten)]
    pub population: super::inputs::PopulationArgs,
}

pub fn run(args: &DemoArgs) -> anyhow::Result<i32> {
    if !(args.speed > 0.0 && args.speed.is_finite()) {
        crate::usage!("--speed must be positive (1 is about a file a second)");
    }
    let mut files: Vec<PathBuf> = std::fs::read_dir(&args.feed)
        .with_context(|| format!("reading the demo feed {}", args.feed.display()))?
        .filter_map(|e| e.ok().map(|e| e.path()))
        .filter(|p| p.is_file())
        .collect();
    files.sort();
    let stamp = chrono::Utc::now().format("%Y%m%dT%H%M%S");
    let root = std::env::temp_dir().join(format!("interloper-demo-{stamp}-{}", std::process::id()));
    let incoming = root.join("incoming");
    std::fs::create_dir_all(&incoming)?;
    let state = args.state.clone().unwrap_or_else(|| root.join("state"));
    eprintln!(
        "demo: replaying {} files into {}",
        files.len(),
        incoming.display()
    );
    let stop = Arc::new(AtomicBool::new(false));
    let copier_stop = stop.clone();
    let dest = incoming.clone();
    let speed = args.speed;
    std::thread::spawn(move || {
        let night = |p: &PathBuf| {
            p.file_name()
                .and_then(|n| n.to_str())
                .and_then(|n| n.rsplit("_n").next())
                .map(str::to_string)
        };
        let mut last_night = None;
        for f in files {
            if copier_stop.load(Ordering::Relaxed) {
                return;
            }
            let n = night(&f);
            // A longer pause between nights, as the real feed would have.
            let pause = if last_night.is_some() && n != last_night {
                4.0
            } else {
                1.0
            };
            last_night = n;
            std::thread::sleep(Duration::from_secs_f64(pause / speed));
            let Some(name) = f.file_name() else { continue };
            // Written under a hidden name and renamed into place, as a careful pipeline does.
            let tmp = dest.join(format!(".{}.part", name.to_string_lossy()));
            if std::fs::copy(&f, &tmp).is_ok() {
                let _ = std::fs::rename(&tmp, dest.join(name));
            }
        }
    });
    let watch = WatchArgs::for_dir(
        incoming,
        state,
        args.headless,
        args.json,
        args.keymap.clone(),
        40.0 / args.speed + 10.0,
        args.population.clone(),
    );
    run_with(&watch, stop)
}
