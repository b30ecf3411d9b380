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
    /// A feed of your own to replay (default: the demo night built into the program).
    #[arg(long, value_name = "DIR")]
    pub feed: Option<PathBuf>,
    /// Where decisions go (default: a fresh folder beside the replay, so the demo leaves no trace).
    #[arg(long, value_name = "DIR")]
    pub state: Option<PathBuf>,
    /// Key map file.
    #[arg(long, value_name = "FILE")]
    pub keymap: Option<PathBuf>,
    /// Who you are in the journal, on a state directory shared with other observers (default: $USER).
    #[arg(long, value_name = "NAME")]
    pub observer: Option<String>,
    /// No console: print results (add --json for JSON lines); stops when the replay is done and idle.
    #[arg(long)]
    pub headless: bool,
    #[arg(long)]
    pub json: bool,
    #[command(flatten)]
    pub population: super::inputs::PopulationArgs,
    #[command(flatten)]
    pub color: super::inputs::ColorArgs,
}

pub fn run(args: &DemoArgs) -> anyhow::Result<i32> {
    if !(args.speed > 0.0 && args.speed.is_finite()) {
        crate::usage!("--speed must be positive (1 is about a file a second)");
    }
    let files = feed_files(args.feed.as_deref())?;
    let stamp = chrono::Utc::now().format("%Y%m%dT%H%M%S");
    let root = std::env::temp_dir().join(format!("interloper-demo-{stamp}-{}", std::process::id()));
    let incoming = root.join("incoming");
    std::fs::create_dir_all(&incoming)
        .map_err(|e| super::Usage(format!("cannot create {}: {e}", incoming.display())))?;
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
        let night = |name: &str| name.rsplit("_n").next().map(str::to_string);
        let mut last_night = None;
        for (name, bytes) in files {
            if copier_stop.load(Ordering::Relaxed) {
                return;
            }
            let n = night(&name);
            // A longer pause between nights, as the real feed would have.
            let pause = if last_night.is_some() && n != last_night {
                4.0
            } else {
                1.0
            };
            last_night = n;
            std::thread::sleep(Duration::from_secs_f64(pause / speed));
            // Written under a hidden name and renamed into place, as a careful pipeline does.
            let tmp = dest.join(format!(".{name}.part"));
            if std::fs::write(&tmp, &bytes).is_ok() {
                let _ = std::fs::rename(&tmp, dest.join(&name));
            }
        }
    });
    let watch = WatchArgs::for_demo(incoming, state, args, 40.0 / args.speed + 10.0);
    let result = run_with(&watch, stop);
    // The replay folder (and the demo's journal, unless --state put it elsewhere) goes with the demo.
    match std::fs::remove_dir_all(&root) {
        Ok(()) => eprintln!("demo: removed {}", root.display()),
        Err(e) => eprintln!("demo: could not remove {}: {e}", root.display()),
    }
    result
}

/// The demo night, built into the program so that an installed binary has it wherever it runs.
static DEMO_NIGHT: include_dir::Dir<'_> =
    include_dir::include_dir!("$CARGO_MANIFEST_DIR/sample_feeds/demo_night");

/// (file name, contents) in arrival (name) order: from `dir`, or the built-in demo night.
fn feed_files(dir: Option<&std::path::Path>) -> anyhow::Result<Vec<(String, Vec<u8>)>> {
    let mut files: Vec<(String, Vec<u8>)> = match dir {
        None => DEMO_NIGHT
            .files()
            .filter_map(|f| {
                let name = f.path().file_name()?.to_str()?.to_string();
                Some((name, f.contents().to_vec()))
            })
            .collect(),
        Some(d) => {
            let mut out = Vec::new();
            for e in std::fs::read_dir(d)
                .with_context(|| format!("reading the demo feed {}", d.display()))?
            {
                let path = e?.path();
                if !path.is_file() {
                    continue;
                }
                let Some(name) = path
                    .file_name()
                    .and_then(|n| n.to_str())
                    .map(str::to_string)
                else {
                    continue;
                };
                let bytes =
                    std::fs::read(&path).with_context(|| format!("reading {}", path.display()))?;
                out.push((name, bytes));
            }
            out
        }
    };
    files.sort_by(|a, b| a.0.cmp(&b.0));
    Ok(files)
}
