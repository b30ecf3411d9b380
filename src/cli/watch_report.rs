//! What headless `watch` says: one line per event (JSON with `--json`), the alert after the fit that
//! raised it, and the counts for the closing line.

use interloper::feed::InputError;
use interloper::feed::engine::EngineEvent;
use interloper::fitting::fit::FitResult;
use std::io::Write;
use std::time::SystemTime;

/// At most this many reasons of one rejected file go into its JSON line (`n_errors` counts them all).
const MAX_REASONS: usize = 100;

/// Line (null for the file as a whole), column and reason of an input error.
fn where_and_why(e: &InputError) -> serde_json::Value {
    serde_json::json!({
        "line": (e.line > 0).then_some(e.line), "column": e.column, "error": e.reason,
    })
}

pub(super) fn utc(t: SystemTime) -> String {
    chrono::DateTime::<chrono::Utc>::from(t).to_rfc3339_opts(chrono::SecondsFormat::Millis, true)
}

pub(super) struct Out {
    pub(super) json: bool,
    pub(super) w: std::io::BufWriter<std::io::Stdout>,
    /// The reader went away (a closed pipe): the run ends quietly.
    pub(super) closed: bool,
}

impl Out {
    pub(super) fn emit(&mut self, value: serde_json::Value, text: String) {
        let line = if self.json { value.to_string() } else { text };
        // A closed pipe ends the run like a signal would: nothing to report to any more.
        if let Err(e) = writeln!(self.w, "{line}").and_then(|_| self.w.flush())
            && e.kind() == std::io::ErrorKind::BrokenPipe
        {
            self.closed = true;
        }
    }

    /// Notice, without writing, that the reader went away (a pipe whose other end closed): an idle
    /// watcher writes nothing, and `watch --headless | head -1` once ran on until the next file.
    pub(super) fn look_for_reader(&mut self) {
        if reader_gone() {
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

/// Report one engine event, and after a fit the alert it raised.
pub(super) fn report_with_alert(
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

/// What the run has seen, for the closing line.
#[derive(Default)]
pub(super) struct Counts {
    pub(super) files: usize,
    pub(super) objects: usize,
    pub(super) observations: usize,
    pub(super) fits: usize,
    pub(super) rejected: usize,
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
    pub(super) fn report_unfitted(&self, out: &mut Out) {
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

/// Whether stdout is a pipe or socket whose reader has gone: poll(2) reports an error or hang-up on it
/// at once, nothing on a terminal, a file or a pipe still read.
#[cfg(unix)]
fn reader_gone() -> bool {
    use rustix::event::{PollFd, PollFlags, Timespec, poll};
    use std::os::fd::AsFd;
    let out = std::io::stdout();
    let fd = out.as_fd();
    let mut fds = [PollFd::new(&fd, PollFlags::empty())];
    let now = Timespec {
        tv_sec: 0,
        tv_nsec: 0,
    };
    matches!(poll(&mut fds, Some(&now)), Ok(n) if n > 0)
        && fds[0].revents().intersects(PollFlags::ERR | PollFlags::HUP)
}

#[cfg(not(unix))]
fn reader_gone() -> bool {
    false
}
