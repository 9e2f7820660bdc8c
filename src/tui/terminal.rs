//! Terminal setup and restore. The panic hook is installed before the
//! terminal is touched, so a panic anywhere leaves a usable shell; quit and
//! SIGTERM/SIGHUP/SIGINT restore through the same [`restore`].

use std::io::{Stdout, stdout};

use ratatui::Terminal;
use ratatui::backend::CrosstermBackend;
use ratatui::crossterm::{
    cursor::Show,
    event::DisableMouseCapture,
    execute,
    terminal::{EnterAlternateScreen, LeaveAlternateScreen, disable_raw_mode, enable_raw_mode},
};

/// The real terminal type.
pub type Tty = Terminal<CrosstermBackend<Stdout>>;

/// Puts the terminal back as the shell expects it. Safe to call twice.
pub fn restore() {
    let _ = disable_raw_mode();
    let _ = execute!(stdout(), DisableMouseCapture, LeaveAlternateScreen, Show);
}

/// Chains a hook that restores the terminal before the previous hook prints
/// the panic. Call first, before [`enter`].
pub fn install_panic_hook() {
    let previous = std::panic::take_hook();
    std::panic::set_hook(Box::new(move |info| {
        restore();
        previous(info);
    }));
}

/// Raw mode and the alternate screen.
pub fn enter() -> std::io::Result<Tty> {
    enable_raw_mode()?;
    if let Err(e) = execute!(stdout(), EnterAlternateScreen) {
        restore();
        return Err(e);
    }
    let mut t = Terminal::new(CrosstermBackend::new(stdout()))?;
    t.clear()?;
    Ok(t)
}
