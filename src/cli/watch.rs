//! `interloper watch`: take in every file that arrives in a directory, fit each changed object on
//! worker threads (through the same engine as the console, with the observers' exclusions and forced
//! methods from the journal when there is one), and report results as they come (JSON lines with
//! `--json`).

use super::inputs::{PopulationArgs, SiteArgs};
use interloper::feed::InputError;
use interloper::feed::engine::{self, Engine, EngineEvent, Overrides};
use interloper::feed::journal::{Journal, Kind, Standing};
use interloper::feed::watcher::{self, WatchOptions};
use interloper::fitting::fit::{FitOptions, FitResult};
use interloper::fitting::origin::OriginOptions;
use std::io::Write;
use std::path::PathBuf;
use std::sync::Arc;
use std::sync::atomic::{AtomicBool, Ordering};
use std::time::{Duration, Instant, SystemTime};

#[derive(Debug, clap::Args)]
pub struct WatchArgs {
    #[command(flatten)]
    pub sites: SiteArgs,
    #[command(flatten)]
    pub population: PopulationArgs,
    #[command(flatten)]
    pub color: super::inputs::ColorArgs,
    /// Where the decision journal lives (default: the platform's state directory).
    #[arg(long, value_name = "DIR")]
    pub state: Option<PathBuf>,
    /// Who you are in the journal, on a state directory shared with other observers (default: $USER).
    #[arg(long, value_name = "NAME")]
    pub observer: Option<String>,
    /// No console: report to standard output.
    #[arg(long)]
    pub headless: bool,
    /// One JSON object per line: fit results (the `fit --json` fields plus `arrived_utc`) and rejections.
    #[arg(long)]
    pub json: bool,
    /// Scan the directory periodically instead of using file-system events (network file systems).
    #[arg(long)]
    pub poll: bool,
    /// A file unchanged this long (ms) is taken as complete.
    #[arg(long, default_value_t = 500, value_name = "MS")]
    pub settle_ms: u64,
    /// Stop once nothing has arrived and nothing is being fitted for this many seconds.
    #[arg(long, value_name = "SECONDS")]
    pub stop_after_idle: Option<f64>,
    /// Worker threads for fitting (default: the machine's cores).
    #[arg(long, value_parser = super::fit::threads_flag)]
    pub threads: Option<usize>,
    /// Key map file for the console (overrides the default keys one by one).
    #[arg(long, value_name = "FILE")]
    pub keymap: Option<PathBuf>,
    /// The directory to watch (it is only read).
    #[arg(value_name = "DIR")]
    pub dir: PathBuf,
}

/// At most this many reasons of one rejected file go into its JSON line (`n_errors` counts them all).
const MAX_REASONS: usize = 100;

/// Line (null for the file as a whole), column and reason of an input error.
fn where_and_why(e: &InputError) -> serde_json::Value {
    serde_json::json!({
        "line": (e.line > 0).then_some(e.line), "column": e.column, "error": e.reason,
    })
}

fn utc(t: SystemTime) -> String {
    chrono::DateTime::<chrono::Utc>::from(t).to_rfc3339_opts(chrono::SecondsFormat::Millis, true)
}

struct Out {
    json: bool,
    w: std::io::BufWriter<std::io::Stdout>,
    /// The reader went away (a closed pipe): the run ends quietly.
    closed: bool,
}

impl Out {
    fn emit(&mut self, value: serde_json::Value, text: String) {
        let line = if self.json { value.to_string() } else { text };
        // A closed pipe ends the run like a signal would: nothing to report to any more.
        if let Err(e) = writeln!(self.w, "{line}").and_then(|_| self.w.flush())
            && e.kind() == std::io::ErrorKind::BrokenPipe
        {
            self.closed = true;
        }
    }

    /// A line of an accepted file that could not be read: one JSON line each.
    fn input_error(&mut self, e: &InputError, arrived: SystemTime) {
        let mut v = where_and_why(e);
        v["kind"] = "input-error".into();
        v["source"] = e.file.clone().into();
        v["arrived_utc"] = utc(arrived).into();
        self.emit(v, format!("input-error: {e}"));
    }

    /// A file refused as a whole: one JSON line for the file, with its first reason as `line`,
    /// `column` and `error` and every reason in `errors` (the text form gives one line each).
    fn rejected_file(&mut self, file: &str, errors: &[InputError], arrived: SystemTime) {
        let first = errors.first().map(where_and_why).unwrap_or_else(
            || serde_json::json!({ "line": null, "column": null, "error": "no observations" }),
        );
        let mut v = first;
        v["kind"] = "rejected".into();
        v["source"] = file.into();
        // A file of a million bad lines stays one readable line: the first reasons and the count.
        v["errors"] = errors.iter().take(MAX_REASONS).map(where_and_why).collect();
        v["n_errors"] = errors.len().into();
        v["arrived_utc"] = utc(arrived).into();
        let text = match errors {
            [] => format!("rejected: {file}: no observations"),
            _ => errors
                .iter()
                .map(|e| format!("rejected: {e}"))
                .collect::<Vec<_>>()
                .join("\n"),
        };
        self.emit(v, text);
    }
}

impl WatchArgs {
    /// The watcher the demo runs on its replay folder, with the demo's own options.
    pub fn for_demo(
        dir: PathBuf,
        state: PathBuf,
        demo: &super::demo::DemoArgs,
        idle: f64,
    ) -> WatchArgs {
        WatchArgs {
            sites: SiteArgs {
                sites: None,
                site_codes: None,
            },
            population: demo.population.clone(),
            color: demo.color.clone(),
            state: Some(state),
            headless: demo.headless,
            json: demo.json,
            poll: false,
            settle_ms: 500,
            stop_after_idle: demo.headless.then_some(idle),
            threads: None,
            keymap: demo.keymap.clone(),
            observer: demo.observer.clone(),
            dir,
        }
    }
}

pub fn run(args: &WatchArgs) -> anyhow::Result<i32> {
    run_with(args, Arc::new(AtomicBool::new(false)))
}

pub fn run_with(args: &WatchArgs, stop: Arc<AtomicBool>) -> anyhow::Result<i32> {
    if !args.dir.is_dir() {
        crate::usage!(
            "{} is not a directory (watch needs the folder the files arrive in)",
            args.dir.display()
        );
    }
    if !args.headless {
        use std::io::IsTerminal;
        if !(std::io::stdin().is_terminal() && std::io::stdout().is_terminal()) {
            eprintln!(
                "error: the console needs a terminal (standard input and output); for scripts and \
                 pipelines use `interloper watch --headless {}`",
                args.dir.display()
            );
            return Ok(2);
        }
    }
    let sites = args.sites.load()?;
    // A hang-up (the SSH link dropped) ends the run like an interrupt: the console restores the
    // terminal, logs, and exits.
    for sig in [
        signal_hook::consts::SIGINT,
        signal_hook::consts::SIGTERM,
        signal_hook::consts::SIGHUP,
    ] {
        signal_hook::flag::register(sig, stop.clone())?;
    }
    let opts = WatchOptions {
        settle: Duration::from_millis(args.settle_ms),
        poll: args.poll,
        ..WatchOptions::default()
    };
    let threads = args.threads.unwrap_or(super::config::get().threads.value);
    if !args.headless {
        let state = args
            .state
            .clone()
            .unwrap_or_else(|| super::config::get().state_dir.value.clone());
        std::fs::create_dir_all(&state).map_err(|e| {
            super::Usage(format!(
                "cannot use {} as the state directory: {e}",
                state.display()
            ))
        })?;
        return super::console::open(
            super::console::ConsoleConfig {
                dir: args.dir.clone(),
                sites,
                state,
                keymap: args
                    .keymap
                    .clone()
                    .or_else(|| super::config::get().keymap.value.clone()),
                watch: opts,
                threads,
                population: args.population.load()?,
                theme: args.color.theme(),
                observer: super::config::get().observer_for(args.observer.as_deref()),
            },
            stop,
        );
    }
    let events = watcher::spawn(args.dir.clone(), opts, stop.clone());
    let population = args.population.load()?;
    let fit_opts = FitOptions {
        origin: Some(OriginOptions::for_model(&population)),
        population,
        ..FitOptions::default()
    };
    // The observers' exclusions and forced methods, if a journal is there: fits here use them too,
    // so the numbers are the consoles' numbers.
    let state = args
        .state
        .clone()
        .unwrap_or_else(|| super::config::get().state_dir.value.clone());
    // Diagnostics to stderr, and to the state directory's log when the directory is there (headless
    // runs never create it).
    if let Some(w) = super::logging::init(
        Some(state.as_path()).filter(|p| p.is_dir()),
        super::logging::Sink::FileAndStderr,
    ) {
        eprintln!("watch: {w}");
    }
    let mut journal = Journal::follow(&state).unwrap_or_else(|e| {
        tracing::warn!("watch: cannot read the journal in {}: {e}", state.display());
        None
    });
    let mut standing = journal
        .as_ref()
        .map(|(_, r)| r.standing())
        .unwrap_or_default();
    let (etx, results) = std::sync::mpsc::channel();
    let engine = Engine::start(
        events,
        Arc::new(sites),
        fit_opts,
        threads,
        engine::overrides_in(&standing),
        move |ev| etx.send(ev).is_ok(),
    );
    let mut out = Out {
        json: args.json,
        closed: false,
        w: std::io::BufWriter::new(std::io::stdout()),
    };
    let mut n = Counts::default();
    let mut alerts =
        super::watch_alerts::HeadlessAlerts::new(super::config::get().alerts.value.clone());
    let mut last_activity = Instant::now();
    let mut last_look = Instant::now();
    // An event taken while deciding whether the feed has gone idle, to be reported first.
    let mut held: Option<EngineEvent> = None;
    while !stop.load(Ordering::Relaxed) && !out.closed {
        let next = match held.take() {
            Some(ev) => Ok(ev),
            None => results.recv_timeout(Duration::from_millis(100)),
        };
        match next {
            Ok(ev) => {
                last_activity = Instant::now();
                report_with_alert(&mut n, &mut out, &mut alerts, ev)?;
            }
            Err(std::sync::mpsc::RecvTimeoutError::Timeout) => {}
            Err(std::sync::mpsc::RecvTimeoutError::Disconnected) => break,
        }
        if let Some((j, _)) = journal.as_mut()
            && last_look.elapsed() >= interloper::feed::journal::POLL
        {
            last_look = Instant::now();
            // A refit asked for by the journal is activity: the idle clock starts again, so the run
            // does not stop before the engine has taken it.
            if follow(j, &mut standing, &engine) {
                last_activity = Instant::now();
            }
        }
        if let Some(idle) = args.stop_after_idle {
            let (waiting, running) = engine.load();
            if waiting == 0 && running == 0 && last_activity.elapsed().as_secs_f64() >= idle {
                // The pool counts a fit as running until the engine has handed its result on, so
                // with the pool idle every result is already in this channel: report it first.
                match results.try_recv() {
                    Ok(ev) => held = Some(ev),
                    Err(_) => break,
                }
            }
        }
    }
    stop.store(true, Ordering::Relaxed);
    engine.shutdown();
    // What was already on its way (a file taken in, a fit finished) is reported before the closing
    // record, so that every object taken in is either fitted or named: until the engine has been
    // quiet for a tenth of a second, two seconds at most.
    let until = Instant::now() + Duration::from_secs(2);
    let late = held.take().into_iter().chain(std::iter::from_fn(|| {
        let left = until.checked_duration_since(Instant::now())?;
        results
            .recv_timeout(left.min(Duration::from_millis(100)))
            .ok()
    }));
    for ev in late {
        report_with_alert(&mut n, &mut out, &mut alerts, ev)?;
    }
    alerts.finish();
    n.report_unfitted(&mut out);
    tracing::info!(
        "watch: stopped; {} file versions read, {} objects, {} observations, {} fits reported, {} rejected",
        n.files,
        n.objects,
        n.observations,
        n.fits,
        n.rejected
    );
    Ok(0)
}

/// Report one engine event, and after a fit the alert it raised.
fn report_with_alert(
    n: &mut Counts,
    out: &mut Out,
    alerts: &mut super::watch_alerts::HeadlessAlerts,
    ev: EngineEvent,
) -> anyhow::Result<()> {
    // The alert line follows the fit that raised it.
    let alert = match &ev {
        EngineEvent::Fit { fit, .. } => alerts.on_fit(fit),
        _ => None,
    };
    n.report(out, ev)?;
    if let Some((json, text)) = alert {
        out.emit(json, text);
    }
    Ok(())
}

/// Lines the observers added: objects whose exclusions or forced methods changed are refitted.
fn follow(j: &mut Journal, standing: &mut Standing, engine: &Engine) -> bool {
    let Ok(read) = j.read_new() else {
        return false;
    };
    let mut touched = std::collections::BTreeSet::new();
    for e in &read.entries {
        standing.apply(e);
        if e.kind != Kind::Decision {
            touched.insert(e.object.clone());
        }
    }
    let refits = !touched.is_empty();
    for obj in touched {
        let ov = standing.get(&obj).map(Overrides::from).unwrap_or_default();
        engine.set_overrides(&obj, ov);
    }
    refits
}

/// What the run has seen, for the closing line.
#[derive(Default)]
struct Counts {
    files: usize,
    objects: usize,
    observations: usize,
    fits: usize,
    rejected: usize,
    /// Objects whose newest observations were queued for a fit not reported yet.
    awaiting: std::collections::BTreeSet<String>,
}

impl Counts {
    /// Report one engine event (a JSON line with `--json`, else a line of text).
    fn report(&mut self, out: &mut Out, ev: EngineEvent) -> anyhow::Result<()> {
        match ev {
            EngineEvent::Ingested {
                path,
                arrived,
                errors,
                rejected,
                objects,
                observations,
                queued,
                ..
            } => {
                self.files += 1;
                self.awaiting.extend(queued);
                (self.objects, self.observations) = (objects, observations);
                if rejected {
                    out.rejected_file(&interloper::feed::sanitize::clean(&path), &errors, arrived);
                } else {
                    for e in &errors {
                        out.input_error(e, arrived);
                    }
                }
                self.rejected += usize::from(rejected);
            }
            EngineEvent::Refused {
                path,
                reason,
                arrived,
            } => {
                self.rejected += 1;
                let file = interloper::feed::sanitize::clean(&path);
                let e = InputError {
                    file: file.clone(),
                    line: 0,
                    column: None,
                    reason,
                };
                out.rejected_file(&file, &[e], arrived);
            }
            EngineEvent::Failed(msg) => tracing::error!("watch: {msg}"),
            EngineEvent::Fit { fit, arrived, .. } => {
                self.fits += 1;
                self.awaiting.remove(&fit.object);
                fit_line(out, &fit, arrived)?;
            }
        }
        Ok(())
    }
}

impl Counts {
    /// Stopped (a signal, a closed pipe) with fits still to come: which objects have no reported fit
    /// of their newest observations, so that a pipeline can fit them (their observations are in the
    /// files; nothing is lost, but nothing about them was said).
    fn report_unfitted(&self, out: &mut Out) {
        if self.awaiting.is_empty() {
            return;
        }
        let ids: Vec<&str> = self.awaiting.iter().map(String::as_str).collect();
        const SHOWN: usize = 20;
        let more = ids.len().saturating_sub(SHOWN);
        let text = format!(
            "unfitted: {} object(s) stopped before their fit was reported (their observations are in \
             the files; `interloper fit` takes them): {}{}",
            ids.len(),
            ids[..ids.len().min(SHOWN)].join(", "),
            if more > 0 {
                format!(" and {more} more")
            } else {
                String::new()
            }
        );
        tracing::warn!("watch: {text}");
        let v = serde_json::json!({
            "kind": "unfitted",
            "n_objects": ids.len(),
            "objects": ids,
        });
        out.emit(v, text);
    }
}

fn fit_line(out: &mut Out, r: &FitResult, at: SystemTime) -> anyhow::Result<()> {
    let mut v = serde_json::to_value(r)?;
    if let Some(m) = v.as_object_mut() {
        m.insert("kind".into(), "fit".into());
        m.insert("arrived_utc".into(), utc(at).into());
    }
    let text = format!(
        "{} {:<14} odds {:>6} P(unb) {:>6} e {:>9} {} ({} obs, {} nights) {}",
        utc(at),
        interloper::feed::sanitize::clean(&r.object),
        interloper::report::odds_text(r),
        r.p_hyperbolic.map_or("-".into(), |p| format!("{p:.3}")),
        r.e.map_or("-".into(), |e| format!("{e:.4}")),
        r.status,
        r.n_obs,
        r.n_nights,
        r.error.clone().unwrap_or_default()
    );
    out.emit(v, text);
    Ok(())
}
