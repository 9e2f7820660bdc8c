//! Colours and emphasis. Colour only ever doubles a word or a symbol that is
//! already on screen, so with `NO_COLOR` set (<https://no-color.org>) the board
//! reads the same: only bold, reverse and underline remain.

use ratatui::style::{Color, Modifier, Style};

/// How the board is painted.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Theme {
    /// False when `NO_COLOR` is set (to any non-empty value) or for tests.
    pub color: bool,
}

impl Theme {
    /// Colour unless the `NO_COLOR` environment variable is set and non-empty.
    pub fn from_env() -> Self {
        let no_color = std::env::var_os("NO_COLOR").is_some_and(|v| !v.is_empty());
        Theme { color: !no_color }
    }

    pub fn monochrome() -> Self {
        Theme { color: false }
    }

    fn fg(&self, c: Color) -> Style {
        if self.color {
            Style::new().fg(c)
        } else {
            Style::new()
        }
    }

    /// Odds at or above the tier's secure level.
    pub fn secure(&self) -> Style {
        self.fg(Color::Green)
    }
    /// Odds below the secure level but even or better.
    pub fn short(&self) -> Style {
        self.fg(Color::Yellow)
    }
    /// Odds below one half.
    pub fn poor(&self) -> Style {
        self.fg(Color::Red).add_modifier(Modifier::BOLD)
    }
    pub fn hedge(&self) -> Style {
        self.fg(Color::Cyan)
    }
    pub fn gamble(&self) -> Style {
        self.fg(Color::Magenta).add_modifier(Modifier::BOLD)
    }
    pub fn dim(&self) -> Style {
        if self.color {
            Style::new().fg(Color::DarkGray)
        } else {
            Style::new()
        }
    }
    pub fn heading(&self) -> Style {
        Style::new().add_modifier(Modifier::BOLD)
    }
    pub fn selected(&self) -> Style {
        Style::new().add_modifier(Modifier::REVERSED)
    }
    pub fn warning(&self) -> Style {
        self.fg(Color::Yellow).add_modifier(Modifier::BOLD)
    }
    pub fn error(&self) -> Style {
        self.fg(Color::Red).add_modifier(Modifier::BOLD)
    }
    pub fn accent(&self) -> Style {
        self.fg(Color::Blue).add_modifier(Modifier::BOLD)
    }
    /// Style for a probability against the tier's secure level.
    pub fn for_odds(&self, p: f64, secure: f64) -> Style {
        if p >= secure {
            self.secure()
        } else if p >= 0.5 {
            self.short()
        } else {
            self.poor()
        }
    }
}
