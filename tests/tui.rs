//! The terminal interface against ratatui's TestBackend, driven by key events through the
//! same key table and update() the real event loop uses.

use ratatui::crossterm::event::{KeyCode, KeyModifiers};
use shardlog::app::App;
use shardlog::tui::harness::{key, key_mod, render, send, type_str};
use shardlog::tui::keys;

fn bench_app() -> App {
    let dir = std::env::temp_dir();
    App::new(&dir.join("shardlog-tui-test-none.db"))
}

fn screen_text(lines: &[String]) -> String {
    lines.join("\n")
}

#[test]
fn every_size_renders_without_panic() {
    let mut app = bench_app();
    for (w, h) in [
        (0, 0),
        (0, 24),
        (80, 0),
        (1, 1),
        (2, 1),
        (10, 3),
        (39, 9),
        (40, 10),
        (60, 15),
        (80, 24),
        (100, 30),
        (250, 80),
    ] {
        let lines = render(&mut app, w, h);
        assert_eq!(lines.len(), h as usize);
    }
    // with help open and a prompt too
    send(&mut app, &key(KeyCode::F(1)));
    for (w, h) in [(0, 0), (1, 1), (20, 5), (40, 10), (80, 24)] {
        render(&mut app, w, h);
    }
}

#[test]
fn small_window_says_so() {
    let mut app = bench_app();
    let text = screen_text(&render(&mut app, 30, 8));
    assert!(text.contains("needs at least"), "{text}");
}

#[test]
fn help_lists_the_keys_of_the_table_and_the_cautions() {
    let mut app = bench_app();
    send(&mut app, &key(KeyCode::F(1)));
    assert!(app.help_open);
    let text = screen_text(&render(&mut app, 100, 40));
    let ctx = app.ctx_beneath_help();
    for b in keys::bindings_for(ctx) {
        assert!(text.contains(b.desc), "help lacks '{}':\n{text}", b.desc);
    }
    assert!(text.contains("cut-resistant gloves"), "{text}");
    assert!(text.contains("qualified investigator"), "{text}");
    send(&mut app, &key(KeyCode::Esc));
    assert!(!app.help_open);
}

#[test]
fn footer_comes_from_the_key_table() {
    let mut app = bench_app();
    let lines = render(&mut app, 100, 30);
    let footer = lines.last().unwrap();
    for b in keys::footer_for(app.ctx()) {
        assert!(
            footer.contains(b.label),
            "footer lacks {}: {footer}",
            b.label
        );
    }
}

#[test]
fn readings_field_shows_the_reason_beside_it() {
    let mut app = bench_app();
    // material pick-list first, then the mirror–mist readings
    send(&mut app, &key(KeyCode::Tab));
    type_str(&mut app, "1.0 mm\n1,1mm");
    let text = screen_text(&render(&mut app, 100, 30));
    assert!(text.contains("line 2"), "{text}");
    assert!(text.contains("decimal"), "{text}");
    // fix it: the reason goes away
    send(&mut app, &key(KeyCode::Backspace));
    send(&mut app, &key(KeyCode::Backspace));
    send(&mut app, &key(KeyCode::Backspace));
    send(&mut app, &key(KeyCode::Backspace));
    type_str(&mut app, ".1mm");
    let text = screen_text(&render(&mut app, 100, 30));
    assert!(!text.contains("decimal"), "{text}");
}

#[test]
fn escape_sequences_typed_or_pasted_never_reach_the_screen() {
    let mut app = bench_app();
    send(&mut app, &key(KeyCode::Tab));
    send(
        &mut app,
        &ratatui::crossterm::event::Event::Paste("1 mm\u{1b}]0;pwned\u{7}".to_string()),
    );
    let text = screen_text(&render(&mut app, 100, 30));
    assert!(!text.contains('\u{1b}'));
    assert!(!text.contains("pwned\u{7}"));
}

#[test]
fn q_types_into_a_field_and_ctrl_c_quits() {
    let mut app = bench_app();
    send(&mut app, &key(KeyCode::Tab));
    type_str(&mut app, "q");
    assert!(!app.quit, "q inside a text field must type, not quit");
    send(
        &mut app,
        &key_mod(KeyCode::Char('c'), KeyModifiers::CONTROL),
    );
    assert!(app.quit, "Ctrl-C quits");
}
