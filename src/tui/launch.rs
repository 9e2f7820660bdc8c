//! Starting a dashboard on the real terminal: panic hook first, then the
//! terminal, the tokio runtime and the event sources; the terminal is
//! restored however the run ends. The log is followed on every tick
//! (200 ms).

use std::path::PathBuf;
use std::sync::atomic::Ordering;
use std::time::Duration;

use super::app::AppState;
use super::planner::{SharedAdvisor, SharedPlanner};
use super::runtime::{LogSink, Runtime};
use super::terminal;

/// What a run needs besides the state.
pub struct Launch {
    pub planner: Option<SharedPlanner>,
    /// Background advice for the notes panel; none switches it off.
    pub advisor: Option<SharedAdvisor>,
    pub log: Option<Box<dyn LogSink>>,
    /// Log to follow from this byte offset (records others append).
    pub follow: Option<(PathBuf, u64)>,
}

/// The dashboard was stopped by this signal; the terminal is restored. The
/// command line exits 128 + its number.
#[derive(Debug, Clone, Copy, PartialEq, Eq, thiserror::Error)]
#[error("stopped by signal {0}")]
pub struct Signalled(pub i32);

/// Runs the dashboard until quit. The panic hook is installed before the
/// terminal is touched. A run ended by SIGTERM, SIGHUP or SIGINT restores
/// the terminal and returns [`Signalled`].
pub fn run(mut state: AppState, launch: Launch) -> anyhow::Result<()> {
    terminal::install_panic_hook();
    let rt = tokio::runtime::Builder::new_multi_thread()
        .worker_threads(2)
        .enable_all()
        .build()?;
    let mut tty = terminal::enter()?;
    let (result, signal) = rt.block_on(async {
        let mut runtime = Runtime::new(launch.planner);
        runtime.log = launch.log;
        runtime.advisor = launch.advisor;
        runtime.spawn_sources();
        runtime.follow = launch.follow;
        let result = runtime.run(&mut tty, &mut state).await;
        (result, runtime.signalled.load(Ordering::SeqCst))
    });
    terminal::restore();
    // A re-plan thread may still be winding down after its cancel flag.
    rt.shutdown_timeout(Duration::from_millis(300));
    result.map_err(anyhow::Error::from)?;
    if signal != 0 {
        return Err(Signalled(signal).into());
    }
    Ok(())
}
