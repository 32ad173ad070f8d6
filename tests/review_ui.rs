//! The review UI without a terminal: key sequences through `App::update`,
//! every screen state rendered on a fixed-size buffer (insta snapshots), and
//! exact colours where they carry meaning.

#[path = "common/review_fixture.rs"]
mod fx;

use crossterm::event::{KeyCode, KeyEvent, KeyModifiers};
use ratatui::buffer::Buffer;
use ratatui::layout::Rect;
use ratatui::style::Color;
use zsift::lines::ObjectClass;
use zsift::tui::app::{
    App, Decision, Effect, Entry, Mode, Msg, Slot, StatusKind, Verdict, shift_z,
};
use zsift::tui::theme::Theme;
use zsift::tui::widgets;

fn key(c: char) -> Msg {
    Msg::Key(KeyEvent::new(KeyCode::Char(c), KeyModifiers::NONE))
}

fn code(k: KeyCode) -> Msg {
    Msg::Key(KeyEvent::new(k, KeyModifiers::NONE))
}

/// Press keys, carrying out Record effects with a journal that succeeds.
fn press(app: &mut App, msgs: impl IntoIterator<Item = Msg>) -> Vec<Effect> {
    let mut all = Vec::new();
    for m in msgs {
        let effects = app.update(m);
        for e in &effects {
            if let Effect::Record(entry) = e {
                let follow = app.update(Msg::Recorded {
                    entry: entry.clone(),
                    result: Ok(()),
                });
                all.extend(follow);
            }
        }
        all.extend(effects);
        fx::deliver(app);
    }
    all
}

fn screen(app: &App, w: u16, h: u16) -> Buffer {
    let area = Rect::new(0, 0, w, h);
    let mut buf = Buffer::empty(area);
    widgets::render(app, area, &mut buf);
    buf
}

fn text(buf: &Buffer) -> String {
    let a = buf.area;
    let mut out = String::new();
    for y in a.top()..a.bottom() {
        let mut line = String::new();
        for x in a.left()..a.right() {
            line.push_str(buf[(x, y)].symbol());
        }
        out.push_str(line.trim_end());
        out.push('\n');
    }
    out
}

fn recorded(effects: &[Effect]) -> Vec<Entry> {
    effects
        .iter()
        .filter_map(|e| match e {
            Effect::Record(x) => Some(x.clone()),
            _ => None,
        })
        .collect()
}

// ---- key sequences --------------------------------------------------------

#[test]
fn accepting_asks_for_a_durable_write_and_says_saved_only_after_it() {
    let mut app = fx::app();
    let effects = app.update(key('a'));
    let entries = recorded(&effects);
    assert_eq!(entries.len(), 1);
    let Entry::Decide {
        target: 0,
        decision,
    } = &entries[0]
    else {
        panic!("{entries:?}")
    };
    assert_eq!(decision.verdict, Verdict::Accept);
    assert_eq!(decision.z, Some(0.1));
    assert_eq!(decision.class, Some(ObjectClass::Galaxy));
    assert_eq!(decision.candidate_rank, Some(1));
    // Not saved yet: the screen must not claim it.
    assert_eq!(app.decisions[0], None);
    assert!(!matches!(app.status, Some((StatusKind::Saved, _))));
    assert!(!text(&screen(&app, 80, 24)).contains("saved:"));
    let _ = app.update(Msg::Recorded {
        entry: entries[0].clone(),
        result: Ok(()),
    });
    assert_eq!(
        app.decisions[0].as_ref().map(|d| d.verdict),
        Some(Verdict::Accept)
    );
    assert!(matches!(&app.status, Some((StatusKind::Saved, s)) if s.contains("Kestrel-01")));
    // And it went on to the next undecided target.
    assert_eq!(app.pos, 1);
}

#[test]
fn a_failed_write_says_not_saved_and_changes_nothing() {
    let mut app = fx::app();
    let effects = app.update(key('r'));
    let entry = recorded(&effects).remove(0);
    let _ = app.update(Msg::Recorded {
        entry,
        result: Err("disk full".into()),
    });
    assert_eq!(app.decisions[0], None);
    assert_eq!(app.pos, 0);
    let shown = text(&screen(&app, 80, 24));
    assert!(shown.contains("NOT SAVED: disk full"), "{shown}");
}

#[test]
fn reject_and_reobserve_record_their_verdicts_without_a_redshift() {
    let mut app = fx::app();
    let e = press(&mut app, [key('r'), key('f')]);
    let v: Vec<(usize, Verdict, Option<f64>)> = recorded(&e)
        .into_iter()
        .map(|x| match x {
            Entry::Decide { target, decision } => (target, decision.verdict, decision.z),
            other => panic!("{other:?}"),
        })
        .collect();
    assert_eq!(
        v,
        vec![(0, Verdict::Reject, None), (1, Verdict::Reobserve, None)]
    );
    assert_eq!(app.pos, 2);
}

#[test]
fn class_and_subclass_set_by_hand_are_accepted_at_the_shown_redshift() {
    let mut app = fx::app();
    let e = press(
        &mut app,
        [
            key('c'),
            key('3'),
            key('B'),
            key('A'),
            key('L'),
            code(KeyCode::Enter),
        ],
    );
    let Entry::Decide { decision, .. } = recorded(&e).remove(0) else {
        panic!()
    };
    assert_eq!(
        decision,
        Decision {
            verdict: Verdict::Accept,
            z: Some(0.1),
            z_err: Some(0.00004),
            class: Some(ObjectClass::Qso),
            subclass: Some("BAL".into()),
            candidate_rank: Some(1),
            by_hand: true,
            grade: None,
            lines: fx::LINES.iter().map(|l| l.0.to_string()).collect(),
            // Target 0's file says time, coordinates and site.
            bary_kms: Some(
                zsift::physics::bary::correction_kms(
                    &fx::loaded(0).spectrum.meta,
                    &Default::default()
                )
                .expect("fixture 0 has a correction")
            ),
        }
    );
}

#[test]
fn escape_cancels_the_class_picker_without_writing() {
    let mut app = fx::app();
    let e = press(&mut app, [key('c'), key('2'), code(KeyCode::Esc)]);
    assert!(recorded(&e).is_empty());
    assert_eq!(app.mode, Mode::Browse);
}

#[test]
fn q_quits_at_once_even_from_the_class_picker() {
    let mut app = fx::app();
    assert_eq!(app.update(key('q')), vec![Effect::Quit]);
    let mut app = fx::app();
    let _ = app.update(key('c'));
    assert_eq!(app.update(key('q')), vec![Effect::Quit]);
}

#[test]
fn a_note_may_contain_q_and_is_cleaned_before_saving() {
    let mut app = fx::app();
    let mut msgs = vec![key('t')];
    msgs.extend("quiet\u{1b}[31m sky".chars().map(key));
    msgs.push(code(KeyCode::Enter));
    let e = press(&mut app, msgs);
    assert!(!e.contains(&Effect::Quit));
    assert_eq!(
        recorded(&e),
        vec![Entry::Note {
            target: 0,
            text: "quiet[31m sky".into()
        }]
    );
    assert_eq!(app.notes[0].as_deref(), Some("quiet[31m sky"));
}

#[test]
fn nudging_asks_the_core_to_remeasure_and_the_answer_replaces_the_matches() {
    let mut app = fx::app();
    let e = app.update(key('.'));
    let want = shift_z(0.1, 25.0);
    assert_eq!(e, vec![Effect::Remeasure { target: 0, z: want }]);
    // Until the core answers, markers move but no match is claimed.
    let shown = app.shown_candidate().expect("candidate");
    assert_eq!(shown.z, want);
    assert!(shown.matched.is_empty());
    let mut c = fx::loaded(0).analysis.candidates[0].clone();
    c.z = want;
    c.matched.truncate(2);
    let _ = app.update(Msg::Remeasured {
        target: 0,
        z: want,
        candidate: c,
    });
    assert_eq!(app.shown_candidate().expect("candidate").matched.len(), 2);
    // Accepting now records the nudged redshift, marked as by hand.
    let Entry::Decide { decision, .. } = recorded(&app.update(key('a'))).remove(0) else {
        panic!()
    };
    assert_eq!(decision.z, Some(want));
    assert!(decision.by_hand);
}

#[test]
fn a_coarse_nudge_is_twenty_fine_ones_and_z_resets() {
    let mut app = fx::app();
    let _ = app.update(key('>'));
    let coarse = app.nudge.as_ref().expect("nudged").z;
    assert!((coarse - shift_z(0.1, 500.0)).abs() < 1e-12);
    let _ = app.update(key('z'));
    assert_eq!(app.nudge, None);
    assert_eq!(app.shown_candidate().expect("c").z, 0.1);
}

#[test]
fn a_stale_remeasurement_for_another_redshift_is_ignored() {
    let mut app = fx::app();
    let _ = app.update(key('.'));
    let _ = app.update(key('.'));
    let old = shift_z(0.1, 25.0);
    let c = fx::loaded(0).analysis.candidates[0].clone();
    let _ = app.update(Msg::Remeasured {
        target: 0,
        z: old,
        candidate: c,
    });
    assert!(app.nudge.as_ref().expect("nudged").candidate.is_none());
}

#[test]
fn undo_restores_the_previous_state_and_returns_to_that_target() {
    let mut app = fx::app();
    let _ = press(&mut app, [key('a')]);
    assert_eq!(app.pos, 1);
    let e = press(&mut app, [key('u')]);
    assert_eq!(recorded(&e), vec![Entry::Undo { target: 0 }]);
    assert_eq!(app.decisions[0], None);
    assert_eq!(app.pos, 0);
    let e = press(&mut app, [key('u')]);
    assert!(recorded(&e).is_empty(), "nothing left to undo");
}

#[test]
fn next_undecided_skips_decided_targets_and_wraps() {
    let mut app = fx::app();
    let _ = press(&mut app, [key('r'), key('r')]);
    assert_eq!(app.pos, 2);
    let _ = press(&mut app, [key('n'), key('n'), key('n')]);
    assert_eq!(app.pos, 5);
    let _ = press(&mut app, [key(' ')]);
    assert_eq!(app.pos, 2, "wraps past the decided 0 and 1");
}

#[test]
fn previous_and_next_stop_at_the_ends() {
    let mut app = fx::app();
    let _ = press(&mut app, [key('p')]);
    assert_eq!(app.pos, 0);
    let _ = press(&mut app, (0..10).map(|_| key('n')));
    assert_eq!(app.pos, 5);
}

#[test]
fn candidate_cursor_moves_within_the_list_and_changes_nothing_it_shows() {
    let mut app = fx::app();
    let _ = press(&mut app, [code(KeyCode::Tab), key('>')]);
    let nudge = app.nudge.clone();
    assert!(nudge.is_some() && app.line_cursor.is_some());
    let _ = press(
        &mut app,
        [
            code(KeyCode::Down),
            code(KeyCode::Down),
            code(KeyCode::Down),
        ],
    );
    assert_eq!(app.cand_cursor, 2, "stops at the last candidate");
    // The shown candidate, its nudge and the line cursor stay.
    assert_eq!(app.cand_shown, 0);
    assert_eq!(app.nudge, nudge);
    assert_eq!(app.line_cursor, Some(0));
    assert!(app.cursor_off_shown());
    let _ = press(&mut app, (0..5).map(|_| code(KeyCode::Up)));
    assert_eq!(app.cand_cursor, 0, "stops at the first");
    assert!(!app.cursor_off_shown());
}

#[test]
fn accept_after_a_cursor_move_without_show_takes_the_shown_candidate() {
    // Chosen behaviour: accept is about what the plot and the line list show
    // (the evidence looked at), never about a row merely highlighted.
    let mut app = fx::app();
    let _ = press(&mut app, [code(KeyCode::Down)]);
    assert_eq!((app.cand_cursor, app.cand_shown), (1, 0));
    let Entry::Decide { decision, .. } = recorded(&app.update(key('a'))).remove(0) else {
        panic!()
    };
    assert_eq!(decision.candidate_rank, Some(1));
    assert_eq!(decision.z, Some(0.1));
}

#[test]
fn show_makes_the_cursor_candidate_the_shown_one_and_accept_takes_it() {
    let mut app = fx::app();
    let _ = press(&mut app, [key('>'), code(KeyCode::Tab)]);
    let _ = press(&mut app, [code(KeyCode::Down), code(KeyCode::Enter)]);
    assert_eq!((app.cand_cursor, app.cand_shown), (1, 1));
    // The nudge and the line cursor belonged to the candidate shown before.
    assert_eq!(app.nudge, None);
    assert_eq!(app.line_cursor, None);
    let shown = app.shown_candidate().expect("shown");
    assert_eq!((shown.rank, shown.z), (2, 0.3421));
    let Entry::Decide { decision, .. } = recorded(&app.update(key('a'))).remove(0) else {
        panic!()
    };
    assert_eq!(decision.candidate_rank, Some(2));
    assert_eq!(decision.z, Some(0.3421));
    assert_eq!(decision.lines, vec!["H-alpha".to_string()]);
}

#[test]
fn show_on_the_shown_candidate_keeps_the_nudge_and_says_which_key_accepts() {
    let mut app = fx::app();
    let _ = press(&mut app, [key('>')]);
    let nudge = app.nudge.clone();
    let e = press(&mut app, [code(KeyCode::Enter)]);
    assert!(recorded(&e).is_empty(), "show never decides");
    assert_eq!(app.nudge, nudge);
    assert!(
        matches!(&app.status, Some((StatusKind::Info, s)) if s == "candidate 1 is shown; a accepts it"),
        "{:?}",
        app.status
    );
}

#[test]
fn a_new_target_puts_cursor_and_shown_candidate_on_the_first() {
    let mut app = fx::app();
    let _ = press(
        &mut app,
        [
            code(KeyCode::Down),
            code(KeyCode::Enter),
            code(KeyCode::Down),
        ],
    );
    assert_eq!((app.cand_cursor, app.cand_shown), (2, 1));
    let _ = press(&mut app, [key('n')]);
    assert_eq!((app.cand_cursor, app.cand_shown), (0, 0));
}

#[test]
fn follow_cursor_shows_each_candidate_the_cursor_reaches() {
    let mut app = fx::app();
    app.follow_cursor = true;
    let _ = press(&mut app, [key('>'), code(KeyCode::Down)]);
    assert_eq!((app.cand_cursor, app.cand_shown), (1, 1));
    assert_eq!(app.nudge, None);
    assert!(!app.cursor_off_shown());
    let Entry::Decide { decision, .. } = recorded(&app.update(key('a'))).remove(0) else {
        panic!()
    };
    assert_eq!(decision.candidate_rank, Some(2));
}

#[test]
fn enter_no_longer_accepts() {
    let mut app = fx::app();
    let e = press(
        &mut app,
        [
            code(KeyCode::Enter),
            code(KeyCode::Down),
            code(KeyCode::Enter),
        ],
    );
    assert!(recorded(&e).is_empty());
    assert_eq!(app.decisions[0], None);
}

#[test]
fn zoom_pan_and_view_all_keep_the_view_inside_the_spectrum() {
    let mut app = fx::app();
    let (lo, hi) = app.full_range().expect("loaded");
    let _ = press(&mut app, [key('+')]);
    let (a, b) = app.view.range.expect("zoomed");
    assert!((b - a - (hi - lo) / 2.0).abs() < 1e-9);
    let _ = press(&mut app, (0..20).map(|_| code(KeyCode::Left)));
    assert_eq!(app.view.range.expect("zoomed").0, lo);
    let _ = press(&mut app, [key('0')]);
    assert_eq!(app.view.range, None);
    let _ = press(&mut app, [key('-')]);
    assert_eq!(
        app.view.range, None,
        "cannot zoom out past the whole spectrum"
    );
}

#[test]
fn jumping_line_to_line_centres_the_view_on_each_matched_line() {
    let mut app = fx::app();
    let _ = press(&mut app, [code(KeyCode::Tab)]);
    assert_eq!(app.line_cursor, Some(0));
    let c = app.shown_candidate().expect("c");
    let (a, b) = app.view.range.expect("zoomed to the line");
    let w = c.matched[0].observed_wavelength;
    assert!(a <= w && w <= b);
    let _ = press(&mut app, [code(KeyCode::BackTab)]);
    assert_eq!(
        app.line_cursor,
        Some(c.matched.len() - 1),
        "wraps backwards"
    );
}

#[test]
fn a_result_for_a_target_far_from_the_cursor_is_not_kept() {
    let mut app = fx::app();
    let _ = app.update(Msg::Loaded {
        target: 5,
        result: Ok(fx::loaded(5)),
    });
    assert!(!app.slots.contains_key(&5));
}

#[test]
fn stepping_asks_the_worker_for_the_next_targets_first() {
    let mut app = fx::app();
    let e = app.update(key('n'));
    assert_eq!(
        e,
        vec![Effect::Want(vec![3])],
        "1 and 2 are loaded, 3 is next ahead"
    );
}

#[test]
fn a_signal_quits_with_its_reason() {
    let mut app = fx::app();
    assert_eq!(
        app.update(Msg::Stop("stopped by SIGHUP".into())),
        vec![Effect::Quit]
    );
    assert!(app.quitting);
}

#[test]
fn help_opens_and_any_key_closes_it() {
    let mut app = fx::app();
    let _ = press(&mut app, [key('?')]);
    assert_eq!(app.mode, Mode::Help);
    let e = press(&mut app, [key('a')]);
    assert_eq!(app.mode, Mode::Browse);
    assert!(recorded(&e).is_empty(), "the closing key does nothing else");
}

// ---- barycentric values ----------------------------------------------------

/// The correction of fixture target `i` as the physics computes it from the
/// same metadata (what the worker stores), and (z_bary, v_bary) for `z`.
fn bary_of(i: usize, z: f64) -> (f64, f64, f64) {
    let meta = &fx::loaded(i).spectrum.meta;
    let corr = zsift::physics::bary::correction_kms(meta, &Default::default())
        .expect("fixture target has a correction");
    let (zb, vb) = zsift::physics::bary::corrected(z, Some(corr));
    (corr, zb.expect("z_bary"), vb.expect("v_bary"))
}

#[test]
fn the_candidate_title_gives_the_correction_and_the_shown_candidates_barycentric_values() {
    let mut app = fx::app();
    let (corr, zb, vb) = bary_of(0, fx::ZS[0]);
    // Observed and barycentric differ (the fixture's correction is km/s sized).
    assert!(corr.abs() > 1.0 && (zb - fx::ZS[0]).abs() > 1e-6);
    let shown = text(&screen(&app, 80, 24));
    let want = format!("bary corr {corr:+.3} km/s: z_bary {zb:.6} v_bary {vb:.1} km/s");
    assert!(shown.contains(&want), "{shown}\nwants {want}");
    // Observed values stay in the list.
    assert!(shown.contains(&format!("{:.5}", fx::ZS[0])));
    // The wide layout has a narrower list: the shorter form.
    let wide = text(&screen(&app, 100, 30));
    let want = format!("bary {corr:+.2} km/s z_bary {zb:.6}");
    assert!(wide.contains(&want), "{wide}\nwants {want}");
    // Another candidate under the cursor: still the shown one's values.
    let _ = press(&mut app, [code(KeyCode::Down)]);
    let z2 = fx::loaded(0).analysis.candidates[1].z;
    let (_, zb2, _) = bary_of(0, z2);
    let shown = text(&screen(&app, 80, 24));
    assert!(shown.contains(&format!("z_bary {zb:.6}")), "{shown}");
    assert!(!shown.contains(&format!("z_bary {zb2:.6}")), "{shown}");
    // Shown: its own barycentric z.
    let _ = press(&mut app, [code(KeyCode::Enter)]);
    assert_eq!(app.shown_candidate().expect("candidate").z, z2);
    assert!(text(&screen(&app, 80, 24)).contains(&format!("z_bary {zb2:.6}")));
    // A nudged redshift: the barycentric z of the nudged value.
    let _ = press(
        &mut app,
        [code(KeyCode::Up), code(KeyCode::Enter), key('>')],
    );
    let zn = app.nudge.as_ref().expect("nudged").z;
    let (_, zbn, _) = bary_of(0, zn);
    let shown = text(&screen(&app, 80, 24));
    assert!(shown.contains(&format!("z_bary {zbn:.6}")), "{shown}");
}

#[test]
fn a_target_whose_correction_cannot_be_made_says_which_input_is_missing() {
    let mut app = fx::app();
    let _ = press(&mut app, [key('n')]);
    let shown = text(&screen(&app, 80, 24));
    assert!(shown.contains("no bary correction: needs site"), "{shown}");
    let _ = press(&mut app, [key('n')]);
    let shown = text(&screen(&app, 80, 24));
    assert!(
        shown.contains("no bary correction: site 'Kestrel Ridge' not configured"),
        "{shown}"
    );
    let _ = press(&mut app, [key('n')]);
    let shown = text(&screen(&app, 80, 24));
    assert!(
        shown.contains("no bary correction: needs obs time, RA/Dec, site"),
        "{shown}"
    );
    // Narrow list (wide layout): the short form still names them.
    let wide = text(&screen(&app, 100, 30));
    assert!(wide.contains("no bary: obs time, RA/Dec, site"), "{wide}");
}

#[test]
fn an_accepted_decision_carries_the_correction_and_its_barycentric_values() {
    let mut app = fx::app();
    let e = press(&mut app, [key('a')]);
    let Entry::Decide { decision, .. } = recorded(&e).remove(0) else {
        panic!()
    };
    let (corr, zb, vb) = bary_of(0, fx::ZS[0]);
    assert_eq!(decision.bary_kms, Some(corr));
    assert_eq!(decision.bary(), (Some(zb), Some(vb)));
    // A target without a correction: none recorded, and no barycentric z.
    let e = press(&mut app, [key('a')]);
    let Entry::Decide { target, decision } = recorded(&e).remove(0) else {
        panic!()
    };
    assert_eq!(target, 1);
    assert_eq!(decision.bary_kms, None);
    assert_eq!(decision.bary(), (None, None));
}

// ---- what a cursor move redraws ---------------------------------------------

/// The row of the candidate list showing rank `rank` at redshift `z` (the
/// list starts at the screen's left edge in both layouts: two mark columns,
/// then the rank and z).
fn candidate_row(buf: &Buffer, rank: usize, z: f64) -> u16 {
    let want = format!("{rank} {z:>7.5}");
    (0..buf.area.height)
        .find(|y| {
            let row: String = (2..2 + want.len() as u16)
                .map(|x| buf[(x, *y)].symbol().to_string())
                .collect();
            row == want
        })
        .unwrap_or_else(|| panic!("no row for candidate {rank}\n{}", text(buf)))
}

/// Cells whose symbol or style differ between two screens.
fn changed(a: &Buffer, b: &Buffer) -> Vec<(u16, u16)> {
    let mut v = Vec::new();
    for y in 0..a.area.height {
        for x in 0..a.area.width {
            if a[(x, y)] != b[(x, y)] {
                v.push((x, y));
            }
        }
    }
    v
}

/// Columns of the footer entry of the show key (its key and its label).
fn show_hint_columns(buf: &Buffer) -> std::ops::Range<u16> {
    let y = buf.area.height - 1;
    let row: String = (0..buf.area.width)
        .map(|x| buf[(x, y)].symbol().to_string())
        .collect();
    let at = row
        .find("Enter show")
        .or_else(|| row.find("Enter SHOW"))
        .unwrap_or_else(|| panic!("no show key in the footer: {row}"));
    // Cells, not bytes (arrow key labels are not ASCII).
    let at = row[..at].chars().count() as u16;
    at..at + "Enter show".len() as u16
}

#[test]
fn a_cursor_move_changes_only_the_two_candidate_rows_and_the_footers_show_hint() {
    for (w, h, ascii) in [
        (80, 24, true),
        (100, 30, true),
        (100, 30, false),
        (64, 18, true),
    ] {
        // The candidate list spans the screen below 100 columns and leaves
        // 54 columns and a gap to the line list from there (widgets::render).
        let list_w = if w >= widgets::WIDE { w - 55 } else { w };
        let mut app = fx::app();
        app.ascii = ascii;
        for target in 0..app.targets.len() {
            let cands = fx::loaded(target).analysis.candidates.clone();
            for k in [
                KeyCode::Up,
                KeyCode::Down,
                KeyCode::Down,
                KeyCode::Down,
                KeyCode::Up,
                KeyCode::Up,
            ] {
                let before = screen(&app, w, h);
                let (c0, off0) = (app.cand_cursor, app.cursor_off_shown());
                let _ = press(&mut app, [code(k)]);
                let after = screen(&app, w, h);
                let (c1, off1) = (app.cand_cursor, app.cursor_off_shown());
                let diff = changed(&before, &after);
                if c0 == c1 {
                    assert!(
                        diff.is_empty(),
                        "{w}x{h}: a move at the end changed {diff:?}"
                    );
                    continue;
                }
                let rows = [
                    candidate_row(&after, cands[c0].rank, cands[c0].z),
                    candidate_row(&after, cands[c1].rank, cands[c1].z),
                ];
                let hint = show_hint_columns(&after);
                for (x, y) in &diff {
                    let in_rows = rows.contains(y) && *x < list_w;
                    let in_hint = off0 != off1 && *y == h - 1 && hint.contains(x);
                    assert!(
                        in_rows || in_hint,
                        "{w}x{h} target {target}: cursor {c0} -> {c1} changed ({x}, {y})\n{}",
                        text(&after)
                    );
                }
                assert!(
                    diff.iter().any(|(_, y)| *y == rows[1]),
                    "the new cursor row"
                );
                assert_eq!(
                    diff.iter().any(|(_, y)| *y == h - 1),
                    off0 != off1,
                    "the hint changes exactly when the cursor leaves or reaches the shown row"
                );
            }
            let _ = press(&mut app, [key('n')]);
        }
    }
}

#[test]
fn the_cursor_row_is_highlighted_the_shown_row_marked_and_the_footer_hints_show() {
    let mut app = fx::app();
    let _ = press(&mut app, [code(KeyCode::Down)]);
    let buf = screen(&app, 80, 24);
    let cands = &fx::loaded(0).analysis.candidates;
    let shown_y = candidate_row(&buf, 1, cands[0].z);
    let cursor_y = candidate_row(&buf, 2, cands[1].z);
    // Standard theme: the cursor is black on cyan across the list's width.
    for x in 0..80 {
        assert_eq!(buf[(x, cursor_y)].bg, Color::Cyan, "cursor row at {x}");
        assert_ne!(buf[(x, shown_y)].bg, Color::Cyan, "shown row at {x}");
    }
    assert_eq!(buf[(0, shown_y)].symbol(), ">");
    assert_eq!(
        buf[(0, shown_y)].fg,
        Color::LightCyan,
        "the mark in the key colour"
    );
    assert_eq!(buf[(0, cursor_y)].symbol(), " ");
    let hint = show_hint_columns(&buf);
    let footer: String = hint
        .clone()
        .map(|x| buf[(x, 23)].symbol().to_string())
        .collect();
    assert_eq!(footer, "Enter SHOW");
    assert!(hint.clone().all(|x| buf[(x, 23)].bg == Color::Cyan));
    // Shown: one row, marked and highlighted; the hint is back to normal.
    let _ = press(&mut app, [code(KeyCode::Enter)]);
    let buf = screen(&app, 80, 24);
    let y = candidate_row(&buf, 2, cands[1].z);
    assert_eq!(buf[(0, y)].symbol(), ">");
    assert_eq!(buf[(0, y)].bg, Color::Cyan);
    assert_eq!(buf[(0, candidate_row(&buf, 1, cands[0].z))].symbol(), " ");
    let hint = show_hint_columns(&buf);
    let footer: String = hint.map(|x| buf[(x, 23)].symbol().to_string()).collect();
    assert_eq!(footer, "Enter show");
}

// ---- screens --------------------------------------------------------------

fn snap(name: &str, app: &App, w: u16, h: u16) {
    insta::assert_snapshot!(name, text(&screen(app, w, h)));
}

#[test]
fn screen_browse_ascii_80x24() {
    snap("browse_ascii_80x24", &fx::app(), 80, 24);
}

#[test]
fn screen_browse_ascii_100x30() {
    snap("browse_ascii_100x30", &fx::app(), 100, 30);
}

#[test]
fn screen_browse_braille_100x30() {
    let mut app = fx::app();
    app.ascii = false;
    snap("browse_braille_100x30", &app, 100, 30);
}

#[test]
fn screen_cursor_off_the_shown_candidate() {
    let mut app = fx::app();
    let _ = press(&mut app, [code(KeyCode::Down), code(KeyCode::Down)]);
    snap("cursor_off_shown_80x24", &app, 80, 24);
    snap("cursor_off_shown_100x30", &app, 100, 30);
}

#[test]
fn screen_waiting_for_the_worker() {
    let mut app = fx::app();
    app.slots.insert(0, Slot::Waiting);
    snap("waiting_80x24", &app, 80, 24);
}

#[test]
fn screen_failed_target() {
    let mut app = fx::app();
    app.slots.insert(
        0,
        Slot::Failed("night1/kestrel-01.fits: line 12, column 3: not a number".into()),
    );
    snap("failed_80x24", &app, 80, 24);
}

#[test]
fn screen_help_overlay_80x24() {
    let mut app = fx::app();
    let _ = press(&mut app, [key('?')]);
    snap("help_80x24", &app, 80, 24);
}

#[test]
fn screen_class_picker_and_subclass_prompt() {
    let mut app = fx::app();
    let _ = press(&mut app, [key('c')]);
    snap("class_picker_80x24", &app, 80, 24);
    let _ = press(&mut app, [key('2'), key('E'), key('0')]);
    snap("subclass_prompt_80x24", &app, 80, 24);
}

#[test]
fn screen_note_prompt() {
    let mut app = fx::app();
    let _ = press(&mut app, [key('t'), key('h'), key('i')]);
    snap("note_prompt_80x24", &app, 80, 24);
}

#[test]
fn screen_decided_target_with_note() {
    let mut app = fx::app();
    app.advance = false;
    let mut msgs = vec![key('t')];
    msgs.extend("thin cloud".chars().map(key));
    msgs.push(code(KeyCode::Enter));
    msgs.push(key('a'));
    let _ = press(&mut app, msgs);
    snap("decided_80x24", &app, 80, 24);
}

#[test]
fn screen_zoomed_on_a_line_with_errors_and_sky() {
    let mut app = fx::app();
    let _ = press(
        &mut app,
        [
            code(KeyCode::Tab),
            code(KeyCode::Tab),
            key('e'),
            key('k'),
            key('s'),
        ],
    );
    snap("zoomed_line_100x30", &app, 100, 30);
}

#[test]
fn screen_nudged_waiting_for_the_core() {
    let mut app = fx::app();
    let _ = press(&mut app, [key('>')]);
    snap("nudged_80x24", &app, 80, 24);
}

#[test]
fn screen_target_without_a_site() {
    let mut app = fx::app();
    let _ = press(&mut app, [key('n')]);
    snap("no_site_80x24", &app, 80, 24);
}

#[test]
fn screen_too_small() {
    snap("too_small", &fx::app(), 50, 12);
}

#[test]
fn screen_empty_queue() {
    let mut app = App::new(Vec::new(), Vec::new(), std::sync::Arc::new(fx::catalogue()));
    let _ = app.start();
    snap("empty_queue_80x24", &app, 80, 24);
}

// ---- colours ---------------------------------------------------------------

#[test]
fn night_theme_paints_every_cell_red_or_black_only() {
    let mut app = fx::app();
    app.ascii = false;
    app.theme = Theme::builtin("night").expect("night");
    let _ = press(&mut app, [code(KeyCode::Tab), key('e'), key('k')]);
    for (w, h) in [(80, 24), (100, 30)] {
        let buf = screen(&app, w, h);
        for cell in buf.content() {
            assert!(
                matches!(cell.fg, Color::Red | Color::Black),
                "fg {:?} at {:?}",
                cell.fg,
                cell.symbol()
            );
            assert!(
                matches!(cell.bg, Color::Red | Color::Black),
                "bg {:?} at {:?}",
                cell.bg,
                cell.symbol()
            );
        }
    }
    // The help overlay and prompts too.
    let _ = press(&mut app, [key('?')]);
    for cell in screen(&app, 80, 24).content() {
        assert!(
            matches!(cell.fg, Color::Red | Color::Black)
                && matches!(cell.bg, Color::Red | Color::Black)
        );
    }
}

#[test]
fn mono_theme_sends_no_colour_at_all() {
    let mut app = fx::app();
    app.theme = Theme::builtin("mono").expect("mono");
    for cell in screen(&app, 100, 30).content() {
        assert_eq!(
            (cell.fg, cell.bg),
            (Color::Reset, Color::Reset),
            "{:?}",
            cell.symbol()
        );
    }
}

#[test]
fn standard_theme_marks_emission_green_and_the_selected_line_highlighted() {
    let mut app = fx::app();
    let buf = screen(&app, 100, 30);
    // Row 2 is the plot's emission-marker row (header is rows 0-1).
    let em: Vec<Color> = (0..100)
        .filter(|x| buf[(*x, 2)].symbol() == "v")
        .map(|x| buf[(x, 2)].fg)
        .collect();
    assert!(!em.is_empty());
    assert!(em.iter().all(|c| *c == Color::LightGreen), "{em:?}");
    let _ = press(&mut app, [code(KeyCode::Tab)]);
    let buf = screen(&app, 100, 30);
    let sel: Vec<(Color, Color)> = (0..100)
        .filter(|x| buf[(*x, 2)].symbol() == "v" && buf[(*x, 2)].bg == Color::LightYellow)
        .map(|x| (buf[(x, 2)].fg, buf[(x, 2)].bg))
        .collect();
    assert_eq!(sel, vec![(Color::Black, Color::LightYellow)]);
}
