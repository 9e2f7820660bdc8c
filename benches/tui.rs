//! Dashboard benchmarks on seeded, invented incidents (docs/performance.md,
//! "Dashboard").
//!
//! * `draw/600x40@200x60` and `@140x45`: drawing the whole board (a proposal
//!   pending) on a `TestBackend`: every panel, layout, the buffer diff.
//! * `key_while_replanning`: a key (select the next task) applied by
//!   `update` and the screen redrawn, while the solver runs a re-plan of the
//!   same 600-unit incident on another thread.
//! * `first_replan_after_loss/100x15`: a unit-lost record applied, the
//!   re-plan started, its first placement (progress or final) taken into the
//!   state and the board drawn at 140×45.

use std::hint::black_box;
use std::sync::Arc;
use std::sync::atomic::{AtomicBool, Ordering};
use std::time::{Duration, Instant};

use criterion::{Criterion, criterion_group, criterion_main};
use oddsboard::log::{Event, Record};
use oddsboard::model::Incident;
use oddsboard::model::generate::{GenerateSpec, generate};
use oddsboard::tui::app::{AppEvent, AppState, Mode, PlanResult, update};
use oddsboard::tui::planner::{Planner, SolverPlanner};
use oddsboard::tui::{Theme, render};
use ratatui::Terminal;
use ratatui::backend::TestBackend;
use ratatui::crossterm::event::{KeyCode, KeyEvent};

fn incident(units: usize, tasks: usize, traits: usize) -> Incident {
    generate(&GenerateSpec::new(units, tasks, traits).seed(7)).expect("generated incident loads")
}

/// The state with a proposal from a short solve.
fn state_with_proposal(inc: Incident) -> AppState {
    let mut state = AppState::new(Mode::Command, inc, Theme::from_env());
    let planner = SolverPlanner::with_budget(Duration::from_millis(300));
    let cancel = AtomicBool::new(false);
    let plan = planner
        .plan(&state.incident, None, &cancel, &mut |_| {})
        .expect("plan");
    update(
        &mut state,
        AppEvent::SolverFinished {
            generation: 0,
            result: Ok(plan),
        },
    );
    state
}

fn bench_draw(c: &mut Criterion) {
    let state = state_with_proposal(incident(600, 40, 5));
    for (w, h) in [(200u16, 60u16), (140, 45)] {
        let mut terminal = Terminal::new(TestBackend::new(w, h)).unwrap();
        c.bench_function(&format!("draw/600x40@{w}x{h}"), |b| {
            b.iter(|| {
                terminal.draw(|f| render(black_box(&state), f)).unwrap();
            })
        });
    }
}

fn bench_key_while_replanning(c: &mut Criterion) {
    let mut state = state_with_proposal(incident(600, 40, 5));
    let stop = Arc::new(AtomicBool::new(false));
    // A re-plan running the whole time on another thread, restarted when it
    // ends, as the dashboard's blocking task would.
    let solver = {
        let inc = state.incident.clone();
        let stop = stop.clone();
        std::thread::spawn(move || {
            let planner = SolverPlanner::with_budget(Duration::from_secs(5));
            while !stop.load(Ordering::Relaxed) {
                let _ = planner.plan(&inc, None, &stop, &mut |_| {});
            }
        })
    };
    let mut terminal = Terminal::new(TestBackend::new(140, 45)).unwrap();
    let n = state.task_order().len();
    c.bench_function("key_while_replanning/600x40@140x45", |b| {
        b.iter(|| {
            let code = if state.selected + 1 < n {
                KeyCode::Down
            } else {
                KeyCode::Home
            };
            update(&mut state, AppEvent::Key(KeyEvent::from(code)));
            terminal.draw(|f| render(&state, f)).unwrap();
        })
    });
    stop.store(true, Ordering::Relaxed);
    let _ = solver.join();
}

fn bench_first_replan_after_loss(c: &mut Criterion) {
    let base = AppState::new(Mode::Command, incident(100, 15, 3), Theme::from_env());
    let planner = SolverPlanner::with_budget(Duration::from_secs(2));
    let mut terminal = Terminal::new(TestBackend::new(140, 45)).unwrap();
    // The unit lost is the first one on a task.
    let lost = oddsboard::model::UnitIdx::range(base.incident.units.len())
        .find(|&u| base.incident.placement.get(u).is_some())
        .expect("a placed unit");
    let lost_id = base.incident.units[lost].id.clone();
    c.bench_function("first_replan_after_loss/100x15", |b| {
        b.iter_custom(|iters| {
            let mut total = Duration::ZERO;
            for i in 0..iters {
                let mut state = base.clone();
                let record = Record {
                    seq: 2 + i,
                    at: chrono::Utc::now(),
                    by: "bench".into(),
                    event: Event::UnitLost {
                        unit: lost_id.clone(),
                        reason: Some("bench".into()),
                    },
                };
                let start = Instant::now();
                update(&mut state, AppEvent::RecordAppended(record));
                let generation = state.generation;
                let cancel = AtomicBool::new(false);
                let mut first: Option<(oddsboard::model::Placement, Duration, u64)> = None;
                // Stop at the first placement the re-plan reports.
                let result = planner.plan(&state.incident, None, &cancel, &mut |p| {
                    if let (None, Some(placement)) = (&first, p.placement) {
                        first = Some((placement.clone(), p.elapsed, p.iterations));
                        cancel.store(true, Ordering::Relaxed);
                    }
                });
                let event = match first {
                    Some((placement, elapsed, iterations)) => AppEvent::SolverProgress {
                        generation,
                        placement: Some(placement),
                        elapsed,
                        iterations,
                        bound: None,
                    },
                    None => AppEvent::SolverFinished {
                        generation,
                        result: result.map(|r: PlanResult| r),
                    },
                };
                update(&mut state, event);
                terminal.draw(|f| render(&state, f)).unwrap();
                total += start.elapsed();
            }
            total
        })
    });
}

criterion_group! {
    name = benches;
    config = Criterion::default().sample_size(30).measurement_time(Duration::from_secs(4));
    targets = bench_draw, bench_key_while_replanning, bench_first_replan_after_loss
}
criterion_main!(benches);
