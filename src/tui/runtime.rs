//! The event loop (tokio): terminal input, ticks, signals and the background
//! re-plan all become [`AppEvent`]s on one channel; the loop applies them with
//! [`update`], carries out the returned [`Effect`]s and redraws. Generic over
//! the ratatui `Backend`, so the same loop runs on a `TestBackend`.

use std::collections::VecDeque;
use std::sync::Arc;
use std::sync::atomic::{AtomicBool, Ordering};
use std::time::{Duration, Instant};

use futures::StreamExt;
use ratatui::Terminal;
use ratatui::backend::Backend;
use ratatui::crossterm::event::{Event as TermEvent, EventStream};
use tokio::sync::mpsc::{UnboundedReceiver, UnboundedSender, unbounded_channel};

use super::app::{AppEvent, AppState, Effect, update};
use super::planner::{SharedAdvisor, SharedPlanner};
use super::view::render;

/// How often a tick arrives (replay play, status clock).
pub const TICK: Duration = Duration::from_millis(200);

/// Pause before advice starts: records that arrive in a burst restart the
/// pause, so only the last state of the burst is advised on, and the
/// re-plan (started at once) gets the cores first.
pub const ADVICE_DEBOUNCE: Duration = Duration::from_millis(400);

/// Wiring of one dashboard run.
pub struct Runtime {
    tx: UnboundedSender<AppEvent>,
    rx: UnboundedReceiver<AppEvent>,
    planner: Option<SharedPlanner>,
    /// Cancel flag of the re-plan in flight.
    running: Option<Arc<AtomicBool>>,
    /// The background advice (watch and the commander's dashboard); none
    /// switches the advice off.
    pub advisor: Option<SharedAdvisor>,
    /// Cancel flag of the advice in flight (or waiting out its pause).
    advising: Option<Arc<AtomicBool>>,
    /// Where the operator's actions are written (the commander's dashboard).
    pub log: Option<Box<dyn LogSink>>,
    /// The log followed for records (ours and others'), and the byte offset
    /// read up to. Polled on every tick and right after each append, so
    /// records are applied in log order whoever wrote them.
    pub follow: Option<(std::path::PathBuf, u64)>,
    /// The number of the signal (SIGTERM, SIGHUP, SIGINT) that ended the
    /// run, 0 when none did: the process then exits 128 + it, as shells
    /// expect of a program stopped by a signal.
    pub signalled: Arc<std::sync::atomic::AtomicI32>,
}

/// Appends events to the incident log, synced before it returns.
pub trait LogSink: Send {
    fn append(&mut self, by: &str, event: crate::log::Event) -> Result<crate::log::Record, String>;
}

impl LogSink for crate::log::LogWriter {
    fn append(&mut self, by: &str, event: crate::log::Event) -> Result<crate::log::Record, String> {
        crate::log::LogWriter::append(self, by, event).map_err(|e| e.to_string())
    }
}

impl Runtime {
    pub fn new(planner: Option<SharedPlanner>) -> Self {
        let (tx, rx) = unbounded_channel();
        Runtime {
            tx,
            rx,
            planner,
            running: None,
            advisor: None,
            advising: None,
            log: None,
            follow: None,
            signalled: Arc::new(std::sync::atomic::AtomicI32::new(0)),
        }
    }

    /// A sender for event sources outside the loop (log followers, tests).
    pub fn sender(&self) -> UnboundedSender<AppEvent> {
        self.tx.clone()
    }

    fn cancel_replan(&mut self) {
        if let Some(flag) = self.running.take() {
            flag.store(true, Ordering::Relaxed);
        }
    }

    fn cancel_advice(&mut self) {
        if let Some(flag) = self.advising.take() {
            flag.store(true, Ordering::Relaxed);
        }
    }

    /// Cancels the advice in flight and starts one on the state's incident
    /// after [`ADVICE_DEBOUNCE`], unless cancelled during the pause.
    fn start_advice(&mut self, state: &AppState, generation: u64) {
        self.cancel_advice();
        let Some(advisor) = self.advisor.clone() else {
            return;
        };
        let cancel = Arc::new(AtomicBool::new(false));
        self.advising = Some(cancel.clone());
        let incident = state.incident.clone();
        let tx = self.tx.clone();
        tokio::task::spawn_blocking(move || {
            let until = Instant::now() + ADVICE_DEBOUNCE;
            while Instant::now() < until {
                if cancel.load(Ordering::Relaxed) {
                    return;
                }
                std::thread::sleep(Duration::from_millis(20));
            }
            let result = advisor.advise(&incident, &cancel);
            if cancel.load(Ordering::Relaxed) {
                return; // a newer state is on its way
            }
            let _ = tx.send(AppEvent::AdviceReady { generation, result });
        });
    }

    /// Cancels the re-plan in flight and starts one on the state's incident.
    fn start_replan(&mut self, state: &AppState, generation: u64) {
        self.cancel_replan();
        let Some(planner) = self.planner.clone() else {
            return;
        };
        let cancel = Arc::new(AtomicBool::new(false));
        self.running = Some(cancel.clone());
        let incident = state.incident.clone();
        let settled_before_loss = state.settled_ground.clone();
        let tx = self.tx.clone();
        tokio::task::spawn_blocking(move || {
            let started = Instant::now();
            let progress_tx = tx.clone();
            let mut progress = |p: &super::planner::PlanProgress| {
                let _ = progress_tx.send(AppEvent::SolverProgress {
                    generation,
                    placement: p.placement.cloned(),
                    elapsed: p.elapsed,
                    iterations: p.iterations,
                    bound: p.bound.cloned(),
                });
            };
            let result = planner.plan(
                &incident,
                settled_before_loss.as_ref(),
                &cancel,
                &mut progress,
            );
            let result = result.map(|mut r| {
                if r.elapsed.is_zero() {
                    r.elapsed = started.elapsed();
                }
                r
            });
            let _ = tx.send(AppEvent::SolverFinished { generation, result });
        });
    }

    /// Carries out effects (and the effects of events they cause). Returns
    /// true when the dashboard must quit.
    pub fn carry_out(&mut self, state: &mut AppState, effects: Vec<Effect>) -> bool {
        let mut queue: VecDeque<Effect> = effects.into();
        while let Some(effect) = queue.pop_front() {
            match effect {
                Effect::Quit => {
                    self.cancel_replan();
                    self.cancel_advice();
                    return true;
                }
                Effect::Advise { generation } => self.start_advice(state, generation),
                Effect::Replan { generation } => self.start_replan(state, generation),
                Effect::Append { events, undoable } => {
                    for event in events {
                        let next = match self.log.as_mut() {
                            Some(sink) => match sink.append(&state.operator, event) {
                                Ok(record) if self.follow.is_none() => {
                                    AppEvent::RecordAppended(record)
                                }
                                Ok(_) => {
                                    // Read back in log order, with anything
                                    // others wrote before it.
                                    for e in self.catch_up() {
                                        queue.extend(update(state, e));
                                    }
                                    continue;
                                }
                                Err(message) => AppEvent::AppendFailed { message, undoable },
                            },
                            None => AppEvent::AppendFailed {
                                message: "this dashboard has no log to write to".into(),
                                undoable,
                            },
                        };
                        let failed = matches!(next, AppEvent::AppendFailed { .. });
                        queue.extend(update(state, next));
                        if failed {
                            break;
                        }
                    }
                }
            }
        }
        false
    }

    /// New records of the followed log, as events.
    pub fn catch_up(&mut self) -> Vec<AppEvent> {
        let Some((path, offset)) = self.follow.as_mut() else {
            return Vec::new();
        };
        match crate::log::read_from(path, *offset) {
            Ok((records, next)) => {
                *offset = next;
                records.into_iter().map(AppEvent::RecordAppended).collect()
            }
            Err(e) => vec![AppEvent::AppendFailed {
                message: format!("following the log: {e}"),
                undoable: false,
            }],
        }
    }

    /// Starts the terminal input, tick and signal sources.
    pub fn spawn_sources(&self) {
        let tx = self.tx.clone();
        tokio::spawn(async move {
            let mut stream = EventStream::new();
            while let Some(ev) = stream.next().await {
                let app = match ev {
                    Ok(TermEvent::Key(k)) => AppEvent::Key(k),
                    Ok(TermEvent::Resize(w, h)) => AppEvent::Resize(w, h),
                    Ok(_) => continue,
                    Err(_) => break,
                };
                if tx.send(app).is_err() {
                    break;
                }
            }
        });
        let tx = self.tx.clone();
        tokio::spawn(async move {
            let mut tick = tokio::time::interval(TICK);
            loop {
                tick.tick().await;
                if tx.send(AppEvent::Tick).is_err() {
                    break;
                }
            }
        });
        #[cfg(unix)]
        {
            use tokio::signal::unix::{SignalKind, signal};
            // SIGINT too: Ctrl-C in raw mode is a key, but `kill -INT` is not.
            for (kind, number) in [
                (SignalKind::terminate(), libc::SIGTERM),
                (SignalKind::hangup(), libc::SIGHUP),
                (SignalKind::interrupt(), libc::SIGINT),
            ] {
                let tx = self.tx.clone();
                let signalled = self.signalled.clone();
                if let Ok(mut sig) = signal(kind) {
                    tokio::spawn(async move {
                        if sig.recv().await.is_some() {
                            // The first signal names the exit code.
                            let _ = signalled.compare_exchange(
                                0,
                                number,
                                Ordering::SeqCst,
                                Ordering::SeqCst,
                            );
                            let _ = tx.send(AppEvent::Shutdown);
                        }
                    });
                }
            }
        }
    }

    /// Draws, waits for events, updates, carries out; until quit. Events
    /// that queued up while drawing are all applied before the next draw,
    /// so a burst of re-plan progress never delays a key.
    pub async fn run<B: Backend>(
        &mut self,
        terminal: &mut Terminal<B>,
        state: &mut AppState,
    ) -> Result<(), B::Error> {
        if state.mode == super::app::Mode::Command {
            self.start_replan(state, state.generation);
        }
        if self.advisor.is_some()
            && let Some(generation) = state.advice_on()
        {
            self.start_advice(state, generation);
        }
        loop {
            terminal.draw(|f| render(state, f))?;
            let Some(first) = self.rx.recv().await else {
                return Ok(());
            };
            let mut pending = vec![first];
            while let Ok(more) = self.rx.try_recv() {
                pending.push(more);
            }
            for event in pending {
                if matches!(event, AppEvent::Tick) {
                    for e in self.catch_up() {
                        let effects = update(state, e);
                        if self.carry_out(state, effects) {
                            return Ok(());
                        }
                    }
                }
                let effects = update(state, event);
                if self.carry_out(state, effects) {
                    return Ok(());
                }
            }
        }
    }
}

impl Drop for Runtime {
    fn drop(&mut self) {
        self.cancel_replan();
        self.cancel_advice();
    }
}
