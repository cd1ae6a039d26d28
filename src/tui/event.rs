//! One stream of events for the explorer: keys, mouse and resizes from the terminal,
//! termination signals, and the terminal going away, all through one channel that the
//! event loop sleeps on. Nothing polls on a timer, so an idle explorer uses no CPU.
//!
//! Three threads feed the channel and block in the kernel the rest of the time:
//! - input: crossterm's blocking `read` (keys, mouse, resizes); an error ends it with
//!   [`Event::TerminalLost`];
//! - signals: SIGTERM, SIGHUP and SIGINT become [`Event::Signal`];
//! - hang-up watch (Linux): `poll` on standard input asking for nothing, which returns
//!   only when the terminal hangs up or the descriptor breaks. It is needed because
//!   crossterm's reader retries forever when a closed terminal reads as end of file, so
//!   the input thread alone would never say so; the watch makes the loop end at once
//!   whatever that thread is doing.

use std::io;
use std::sync::mpsc::{Receiver, Sender, TryRecvError, channel};
use std::thread;

use ratatui::crossterm::event::{self, KeyEvent, KeyEventKind, MouseEvent};
use signal_hook::consts::{SIGHUP, SIGINT, SIGTERM};
use signal_hook::iterator::{Handle, Signals};

/// Everything the event loop reacts to.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum Event {
    /// A key was pressed.
    Key(KeyEvent),
    /// The mouse was used.
    Mouse(MouseEvent),
    /// The window changed size.
    Resize,
    /// A termination signal arrived (its number).
    Signal(i32),
    /// The terminal is gone (hang-up, end of input, an error reading it); why, in words.
    TerminalLost(String),
}

/// The receiving end of the explorer's events.
pub struct Events {
    receiver: Receiver<Event>,
    /// An event taken from the channel to see whether one was there.
    waiting: Option<Event>,
    signals: Handle,
}

impl Events {
    /// Starts the threads that feed the channel.
    pub fn start() -> io::Result<Self> {
        let (sender, receiver) = channel();
        let mut signals = Signals::new([SIGTERM, SIGHUP, SIGINT])?;
        let handle = signals.handle();
        let to_loop = sender.clone();
        thread::Builder::new()
            .name("sextant-signals".into())
            .spawn(move || {
                for signal in signals.forever() {
                    if to_loop.send(Event::Signal(signal)).is_err() {
                        break;
                    }
                }
            })?;
        #[cfg(target_os = "linux")]
        {
            let to_loop = sender.clone();
            thread::Builder::new()
                .name("sextant-hangup".into())
                .spawn(move || watch_for_hangup(&to_loop))?;
        }
        thread::Builder::new()
            .name("sextant-input".into())
            .spawn(move || read_input(&sender))?;
        Ok(Self {
            receiver,
            waiting: None,
            signals: handle,
        })
    }

    /// Waits for the next event.
    pub fn next(&mut self) -> Event {
        self.waiting.take().unwrap_or_else(|| {
            self.receiver
                .recv()
                .unwrap_or_else(|_| Event::TerminalLost("the input reader stopped".into()))
        })
    }

    /// True when no event is waiting (the moment for deferred work).
    pub fn is_idle(&mut self) -> bool {
        if self.waiting.is_some() {
            return false;
        }
        match self.receiver.try_recv() {
            Ok(event) => {
                self.waiting = Some(event);
                false
            }
            Err(TryRecvError::Empty) => true,
            Err(TryRecvError::Disconnected) => false,
        }
    }
}

impl Drop for Events {
    fn drop(&mut self) {
        self.signals.close();
    }
}

fn read_input(sender: &Sender<Event>) {
    loop {
        let event = match event::read() {
            Ok(event::Event::Key(key)) if key.kind == KeyEventKind::Press => Event::Key(key),
            Ok(event::Event::Mouse(mouse)) => Event::Mouse(mouse),
            Ok(event::Event::Resize(..)) => Event::Resize,
            Ok(_) => continue,
            Err(e) => Event::TerminalLost(format!("reading the terminal failed: {e}")),
        };
        let last = matches!(event, Event::TerminalLost(_));
        if sender.send(event).is_err() || last {
            return;
        }
    }
}

/// Blocks until standard input hangs up or breaks, then says so.
#[cfg(target_os = "linux")]
fn watch_for_hangup(sender: &Sender<Event>) {
    use rustix::event::{PollFd, PollFlags, poll};
    let stdin = io::stdin();
    loop {
        // Asking for no events: poll still reports hang-up, error and a closed descriptor.
        let mut fds = [PollFd::new(&stdin, PollFlags::empty())];
        match poll(&mut fds, None) {
            Ok(_) => {
                let flags = fds[0].revents();
                if flags.intersects(PollFlags::HUP | PollFlags::ERR | PollFlags::NVAL) {
                    let _ = sender.send(Event::TerminalLost("the terminal hung up".into()));
                    return;
                }
            }
            Err(rustix::io::Errno::INTR) => {}
            Err(e) => {
                let _ = sender.send(Event::TerminalLost(format!(
                    "watching the terminal failed: {e}"
                )));
                return;
            }
        }
    }
}
