//! The console's journal thread: writes the lines the console sends, and reads back every line added
//! since it last looked — its own and other processes', in file order — so that what the screen shows
//! is always the fold of the journal.

use super::runtime::AppEvent;
use crate::feed::journal::{Entry, Journal, POLL};
use std::sync::mpsc::{Receiver, RecvTimeoutError, Sender, channel};
use std::thread::JoinHandle;

/// Why a line the thread never reached was not saved.
pub const WRITER_STOPPED: &str = "the journal writer stopped";

/// The journal's own thread: writes what the console sends, then reads back every line added since
/// it last looked (its own and other processes', in file order); with nothing to write it looks
/// every [`POLL`], so another console's decision shows here within a second.
///
/// It ends only when every sender is gone, after writing everything sent before: a decision keyed
/// just before quitting is on disk once the handle is joined. Should the thread die instead, every
/// line still waiting for it is reported as not saved.
pub fn spawn(journal: Journal, tx: Sender<AppEvent>) -> (Sender<Entry>, JoinHandle<()>) {
    let (jtx, jrx) = channel::<Entry>();
    let handle = std::thread::spawn(move || {
        let mut writer = Writer {
            journal,
            rx: jrx,
            tx,
            in_hand: None,
        };
        writer.run();
    });
    (jtx, handle)
}

struct Writer {
    journal: Journal,
    rx: Receiver<Entry>,
    tx: Sender<AppEvent>,
    /// The object of the line being written (reported as not saved if the thread dies over it).
    in_hand: Option<String>,
}

impl Writer {
    fn run(&mut self) {
        loop {
            let saved = match self.rx.recv_timeout(POLL) {
                Ok(e) => {
                    let object = e.object.clone();
                    self.in_hand = Some(object.clone());
                    let r = self
                        .journal
                        .append(e)
                        .map_err(|err| (object, err.to_string()));
                    self.in_hand = None;
                    Some(r)
                }
                Err(RecvTimeoutError::Timeout) => None,
                Err(RecvTimeoutError::Disconnected) => return,
            };
            let read = match self.journal.read_new() {
                Ok(r) if r.entries.is_empty() && r.warnings.is_empty() => None,
                Ok(r) => Some(AppEvent::JournalRead(r.entries, r.warnings)),
                Err(e) => Some(AppEvent::JournalRead(
                    Vec::new(),
                    vec![format!("cannot read the journal: {e}")],
                )),
            };
            // What was read goes first, so a saved line shows its effect as it stops saying "saving…".
            // Nobody listening (the console is closing) is no reason to stop writing.
            for ev in read.into_iter().chain(saved.map(AppEvent::Journal)) {
                let _ = self.tx.send(ev);
            }
        }
    }
}

impl Drop for Writer {
    /// Reached with lines still waiting only when the thread dies: each is reported (on the screen
    /// and in the log), none is lost silently.
    fn drop(&mut self) {
        let left = self.in_hand.take().into_iter();
        for object in left.chain(self.rx.try_iter().map(|e| e.object)) {
            tracing::error!(
                "journal line for {} not saved: {WRITER_STOPPED}",
                crate::feed::sanitize::clean(&object)
            );
            let _ = self
                .tx
                .send(AppEvent::Journal(Err((object, WRITER_STOPPED.to_string()))));
        }
    }
}
