//! Short forms and pickers for operator actions, with inline validation.
//! Text fields use `tui-input`; a picker filters its options as the operator
//! types. A form never changes the incident: submitting yields the log
//! events to append, or the field and message of what is wrong.

use ratatui::Frame;
use ratatui::crossterm::event::{Event as TermEvent, KeyCode, KeyEvent};
use ratatui::layout::{Constraint, Rect};
use ratatui::text::{Line, Span};
use ratatui::widgets::{Block, Clear, Paragraph};
use tui_input::Input;
use tui_input::backend::crossterm::to_input_request;

use super::theme::Theme;

/// What the form is for.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum FormKind {
    Lost,
    AddUnit,
    AddTask,
    Rerate,
    Observe,
    ChangeNeed,
    CloseTask,
    Pin,
    Move,
    Note,
    AcceptOne,
    GoTo,
}

impl FormKind {
    pub fn title(self) -> &'static str {
        match self {
            FormKind::Lost => "Mark a unit lost",
            FormKind::AddUnit => "Add a unit (arrives in reserve)",
            FormKind::AddTask => "Open a new task",
            FormKind::Rerate => "Re-rate a unit",
            FormKind::Observe => "Record a field reading",
            FormKind::ChangeNeed => "Change a need",
            FormKind::CloseTask => "Close a task",
            FormKind::Pin => "Pin a unit (or unpin)",
            FormKind::Move => "Move a unit by hand",
            FormKind::Note => "Add a note to the log",
            FormKind::AcceptOne => "Accept one proposed move",
            FormKind::GoTo => "Go to a record",
        }
    }
}

/// A text field or a picker.
#[derive(Debug, Clone)]
pub enum FieldKind {
    Text(Input),
    Pick {
        /// (value, shown text)
        options: Vec<(String, String)>,
        filter: Input,
        cursor: usize,
    },
}

#[derive(Debug, Clone)]
pub struct Field {
    pub label: &'static str,
    pub hint: &'static str,
    pub kind: FieldKind,
}

impl Field {
    pub fn text(label: &'static str, hint: &'static str, value: &str) -> Self {
        Field {
            label,
            hint,
            kind: FieldKind::Text(Input::new(value.to_string())),
        }
    }
    pub fn pick(
        label: &'static str,
        options: Vec<(String, String)>,
        preselect: Option<&str>,
    ) -> Self {
        let cursor = preselect
            .and_then(|p| options.iter().position(|(v, _)| v == p))
            .unwrap_or(0);
        Field {
            label,
            hint: "type to filter, ↑↓ to choose",
            kind: FieldKind::Pick {
                options,
                filter: Input::default(),
                cursor,
            },
        }
    }

    /// Options of a picker that match its filter.
    pub fn visible(&self) -> Vec<&(String, String)> {
        match &self.kind {
            FieldKind::Pick {
                options, filter, ..
            } => {
                let f = filter.value().to_lowercase();
                options
                    .iter()
                    .filter(|(_, shown)| shown.to_lowercase().contains(&f))
                    .collect()
            }
            FieldKind::Text(_) => Vec::new(),
        }
    }

    /// The field's value: the text, or the chosen option's value.
    pub fn value(&self) -> Option<String> {
        match &self.kind {
            FieldKind::Text(i) => Some(i.value().trim().to_string()),
            FieldKind::Pick { cursor, .. } => self.visible().get(*cursor).map(|(v, _)| v.clone()),
        }
    }
}

/// An open form.
#[derive(Debug, Clone)]
pub struct Form {
    pub kind: FormKind,
    pub fields: Vec<Field>,
    pub focus: usize,
    /// (field, message) of the last failed submit.
    pub error: Option<(usize, String)>,
}

/// What a key did to a form.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum FormOutcome {
    Editing,
    Cancel,
    Submit,
}

impl Form {
    pub fn new(kind: FormKind, fields: Vec<Field>) -> Self {
        Form {
            kind,
            fields,
            focus: 0,
            error: None,
        }
    }

    pub fn value(&self, i: usize) -> String {
        self.fields
            .get(i)
            .and_then(Field::value)
            .unwrap_or_default()
    }

    pub fn on_key(&mut self, key: KeyEvent) -> FormOutcome {
        let n = self.fields.len();
        match key.code {
            KeyCode::Esc => return FormOutcome::Cancel,
            KeyCode::Enter => {
                if self.focus + 1 < n {
                    self.focus += 1;
                    return FormOutcome::Editing;
                }
                return FormOutcome::Submit;
            }
            KeyCode::Tab => {
                self.focus = (self.focus + 1) % n.max(1);
                return FormOutcome::Editing;
            }
            KeyCode::BackTab => {
                self.focus = (self.focus + n.max(1) - 1) % n.max(1);
                return FormOutcome::Editing;
            }
            _ => {}
        }
        let Some(field) = self.fields.get_mut(self.focus) else {
            return FormOutcome::Editing;
        };
        let visible = field.visible().len();
        match &mut field.kind {
            FieldKind::Text(input) => match key.code {
                KeyCode::Up => self.focus = self.focus.saturating_sub(1),
                KeyCode::Down if self.focus + 1 < n => self.focus += 1,
                _ => {
                    if let Some(req) = to_input_request(&TermEvent::Key(key)) {
                        input.handle(req);
                    }
                }
            },
            FieldKind::Pick { filter, cursor, .. } => match key.code {
                KeyCode::Up => *cursor = cursor.saturating_sub(1),
                KeyCode::Down if *cursor + 1 < visible => *cursor += 1,
                _ => {
                    if let Some(req) = to_input_request(&TermEvent::Key(key)) {
                        filter.handle(req);
                        *cursor = 0;
                    }
                }
            },
        }
        FormOutcome::Editing
    }
}

/// Draws the form centred over `area`.
pub fn render(form: &Form, theme: &Theme, frame: &mut Frame, area: Rect) {
    let mut lines: Vec<Line> = Vec::new();
    let mut cursor_at = None;
    for (i, f) in form.fields.iter().enumerate() {
        let focused = i == form.focus;
        let mark = if focused { "▸ " } else { "  " };
        match &f.kind {
            FieldKind::Text(input) => {
                let label = format!("{mark}{:<12} ", f.label);
                let row = lines.len();
                cursor_at = focused.then(|| (label.chars().count() + input.visual_cursor(), row));
                lines.push(Line::from(vec![
                    Span::styled(label, theme.heading()),
                    Span::raw(input.value().to_string()),
                ]));
                if focused {
                    lines.push(Line::styled(format!("    {}", f.hint), theme.dim()));
                }
            }
            FieldKind::Pick { filter, cursor, .. } => {
                let visible = f.visible();
                let chosen = visible
                    .get(*cursor)
                    .map(|(_, s)| s.as_str())
                    .unwrap_or("(none matches)");
                let label = format!("{mark}{:<12} ", f.label);
                if focused {
                    let row = lines.len();
                    cursor_at = Some((label.chars().count() + 8 + filter.visual_cursor(), row));
                    lines.push(Line::from(vec![
                        Span::styled(label, theme.heading()),
                        Span::raw(format!("filter: {}", filter.value())),
                    ]));
                    let start = cursor.saturating_sub(4);
                    for (j, (_, shown)) in visible.iter().enumerate().skip(start).take(8) {
                        let style = if j == *cursor {
                            theme.selected()
                        } else {
                            ratatui::style::Style::new()
                        };
                        let m = if j == *cursor { "  ▸ " } else { "    " };
                        lines.push(Line::styled(format!("{m}{shown}"), style));
                    }
                    if visible.is_empty() {
                        lines.push(Line::styled("    (none matches the filter)", theme.dim()));
                    }
                } else {
                    lines.push(Line::from(vec![
                        Span::styled(label, theme.heading()),
                        Span::raw(chosen.to_string()),
                    ]));
                }
            }
        }
        if let Some((fi, msg)) = &form.error
            && *fi == i
        {
            lines.push(Line::styled(format!("    ✗ {msg}"), theme.error()));
        }
    }
    lines.push(Line::raw(""));
    lines.push(Line::styled(
        " Enter next/submit · Tab field · Esc cancel · written to the log on submit",
        theme.dim(),
    ));
    let h = (lines.len() as u16 + 2).min(area.height);
    let w = 76.min(area.width);
    let popup = area.centered(Constraint::Length(w), Constraint::Length(h));
    frame.render_widget(Clear, popup);
    frame.render_widget(
        Paragraph::new(super::format::clean_lines(lines))
            .block(Block::bordered().title(format!(" {} ", form.kind.title()))),
        popup,
    );
    if let Some((x, y)) = cursor_at {
        let x = popup.x + 1 + x as u16;
        let y = popup.y + 1 + y as u16;
        if x < popup.right() && y < popup.bottom() {
            frame.set_cursor_position((x, y));
        }
    }
}
