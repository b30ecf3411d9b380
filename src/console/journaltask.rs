//! The console's journal thread: writes the lines the console sends, and reads back every line added
//! since it last looked — its own and other processes', in file order — so that what the screen shows
//! is always the fold of the journal.

use super::runtime::AppEvent;
use crate::feed::journal::{Entry, Journal, POLL};
use std::sync::Arc;
use std::sync::atomic::{AtomicBool, Ordering};
use std::sync::mpsc::{RecvTimeoutError, Sender, channel};

/// The journal's own thread: writes what the console sends, then reads back every line added since
/// it last looked (its own and other processes', in file order); with nothing to write it looks
/// every [`POLL`], so another console's decision shows here within a second.
pub fn spawn(mut journal: Journal, tx: Sender<AppEvent>, stop: Arc<AtomicBool>) -> Sender<Entry> {
    let (jtx, jrx) = channel::<Entry>();
    std::thread::spawn(move || {
        while !stop.load(Ordering::Relaxed) {
            let saved = match jrx.recv_timeout(POLL) {
                Ok(e) => {
                    let object = e.object.clone();
                    Some(journal.append(e).map_err(|err| (object, err.to_string())))
                }
                Err(RecvTimeoutError::Timeout) => None,
                Err(RecvTimeoutError::Disconnected) => return,
            };
            let read = match journal.read_new() {
                Ok(r) if r.entries.is_empty() && r.warnings.is_empty() => None,
                Ok(r) => Some(AppEvent::JournalRead(r.entries, r.warnings)),
                Err(e) => Some(AppEvent::JournalRead(
                    Vec::new(),
                    vec![format!("cannot read the journal: {e}")],
                )),
            };
            // What was read goes first, so a saved line shows its effect as it stops saying "saving…".
            for ev in read.into_iter().chain(saved.map(AppEvent::Journal)) {
                if tx.send(ev).is_err() {
                    return;
                }
            }
        }
    });
    jtx
}
