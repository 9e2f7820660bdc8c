//! No key in any state crashes the dashboard or corrupts its state: random
//! key sequences (proptest) are driven through `update`, whatever they write
//! goes to a real log, and the dashboard's incident must always equal the
//! log's fold, and every screen must draw.

mod tui_common;

use oddsboard::tui::Mode;
use proptest::prelude::*;
use ratatui::crossterm::event::KeyCode;
use tui_common::{Bench, draw, drill};

fn key() -> impl Strategy<Value = KeyCode> {
    prop_oneof![
        4 => prop::sample::select(vec![
            'l', 'a', 'r', 'n', 'c', 'p', 'm', 't', 's', 'y', 'x', 'u', '?', 'j', 'k', 'E', '1',
            '4', 'T', 'W', '0', '-', '.', ' ', '+', 'g', '<', '>',
        ])
        .prop_map(KeyCode::Char),
        3 => prop::sample::select(vec![
            KeyCode::Enter,
            KeyCode::Esc,
            KeyCode::Tab,
            KeyCode::BackTab,
            KeyCode::Up,
            KeyCode::Down,
            KeyCode::Left,
            KeyCode::Right,
            KeyCode::Home,
            KeyCode::End,
            KeyCode::PageUp,
            KeyCode::PageDown,
            KeyCode::Backspace,
            KeyCode::Delete,
        ]),
    ]
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 48, ..ProptestConfig::default() })]

    #[test]
    fn random_keys_keep_the_state_equal_to_the_log(keys in prop::collection::vec(key(), 1..120)) {
        let mut b = Bench::new(drill());
        for k in keys {
            if k == KeyCode::Char('q') {
                continue;
            }
            b.key(k);
            prop_assert_eq!(&b.state.incident, &b.folded());
        }
        let _ = draw(&b.state, 100, 30);
        let _ = draw(&b.state, 160, 50);
    }

    #[test]
    fn random_keys_in_replay_stay_within_the_log(keys in prop::collection::vec(key(), 1..80)) {
        let mut b = Bench::new(drill());
        b.key(KeyCode::Char('t'));
        b.type_enter("first note");
        b.key(KeyCode::Char('m'));
        b.type_enter("E4");
        b.type_enter("T4");
        let records = b.records();
        let n = records.len();
        let mut s = oddsboard::tui::app::replay_state(records.clone(), oddsboard::tui::Theme::monochrome()).unwrap();
        prop_assert_eq!(s.mode, Mode::Replay);
        for k in keys {
            oddsboard::tui::update(&mut s, oddsboard::tui::AppEvent::Key(k.into()));
            let at = s.replay.as_ref().unwrap().at;
            prop_assert!(at < n);
            let folded = oddsboard::log::fold(&records[..=at]).unwrap();
            prop_assert_eq!(&s.incident, &folded);
        }
        let _ = draw(&s, 120, 40);
    }
}
