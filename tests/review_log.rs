//! Decisions made in the review, written through the production journal
//! (`tui::decision_log::DecisionLog` over `decisions::Log`), carry the
//! barycentric values the screen showed into the log, back into a new
//! session, and out through `zsift export`.

#[path = "common/review_fixture.rs"]
mod fx;

use crossterm::event::{KeyCode, KeyEvent, KeyModifiers};
use std::process::Command;
use zsift::decisions::{Log, Status, replay};
use zsift::physics::bary;
use zsift::tui::app::{App, Effect, Msg};
use zsift::tui::decision_log::{DecisionLog, state_of};
use zsift::tui::journal::Journal;

fn key(c: char) -> Msg {
    Msg::Key(KeyEvent::new(KeyCode::Char(c), KeyModifiers::NONE))
}

/// Press keys, writing every Record effect through `journal` as the runtime does.
fn press(app: &mut App, journal: &mut dyn Journal, keys: &str) {
    for c in keys.chars() {
        let effects = app.update(key(c));
        for e in effects {
            if let Effect::Record(entry) = e {
                let result = journal.write(&app.targets, &entry);
                assert!(result.is_ok(), "{result:?}");
                let _ = app.update(Msg::Recorded { entry, result });
            }
        }
        fx::deliver(app);
    }
}

/// The correction of fixture target `i` as the physics gives it for the same
/// metadata; `None` when the file cannot give one.
fn correction(i: usize) -> Option<f64> {
    bary::correction_kms(&fx::loaded(i).spectrum.meta, &Default::default()).ok()
}

#[test]
fn accepted_decisions_log_the_barycentric_values_and_export_carries_them() {
    let tmp = tempfile::tempdir().expect("tmp");
    let dir = tmp.path().join("log");
    let mut journal = DecisionLog::new(Log::open(&dir).expect("log"), "tester");
    let mut app = fx::app();
    // Accept the first target (correction known), accept the second (its
    // file has no site), flag the third.
    press(&mut app, &mut journal, "aaf");
    assert_eq!(app.pos, 3);

    let r = replay(&dir).expect("replay");
    let corr = correction(0).expect("fixture 0 has everything");
    let name = |i: usize| app.targets[i].name.clone();

    let s = r.state(&name(0)).expect("state");
    assert_eq!(s.status, Status::Accepted);
    let sol = s.solution.as_ref().expect("solution");
    let (zb, vb) = bary::corrected(fx::ZS[0], Some(corr));
    assert_eq!(sol.z, Some(fx::ZS[0]));
    // The log keeps every bit (serde_json float_roundtrip).
    assert_eq!(sol.barycentric_correction_kms, Some(corr));
    assert_eq!(sol.z_bary, zb);
    assert_eq!(sol.velocity_bary_kms, vb);

    let s = r.state(&name(1)).expect("state");
    assert_eq!(s.status, Status::Accepted);
    let sol = s.solution.as_ref().expect("solution");
    assert_eq!(correction(1), None, "fixture 1 lacks a site");
    assert_eq!(sol.z, Some(fx::ZS[1]));
    assert_eq!(
        (
            sol.z_bary,
            sol.velocity_bary_kms,
            sol.barycentric_correction_kms
        ),
        (None, None, None)
    );
    assert_eq!(r.status(&name(2)), Status::Flagged);

    // A second session reads the correction back with the decision.
    let (decisions, _) = state_of(&r, &app.targets);
    let d0 = decisions[0].as_ref().expect("decided");
    assert_eq!(d0.bary_kms, Some(corr));
    assert_eq!(d0.bary(), (zb, vb));

    // Export, through the command as a user runs it.
    let out = Command::new(env!("CARGO_BIN_EXE_zsift"))
        .args(["export", "--format", "csv", "--log"])
        .arg(&dir)
        .output()
        .expect("export runs");
    assert_eq!(
        out.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let mut csv = csv::Reader::from_reader(out.stdout.as_slice());
    let header = csv.headers().expect("header").clone();
    let col = |n: &str| header.iter().position(|h| h == n).expect(n);
    let (t, zb_col, vb_col, c_col) = (
        col("target"),
        col("z_bary"),
        col("velocity_bary_kms"),
        col("barycentric_correction_kms"),
    );
    let rows: Vec<csv::StringRecord> = csv.records().map(|r| r.expect("row")).collect();
    let row = |n: &str| rows.iter().find(|r| &r[t] == n).expect(n).clone();
    let num = |s: &str| s.parse::<f64>().expect("number");
    let r0 = row(&name(0));
    assert_eq!(num(&r0[zb_col]), zb.expect("z_bary"));
    assert_eq!(num(&r0[vb_col]), vb.expect("v_bary"));
    assert_eq!(num(&r0[c_col]), corr);
    let r1 = row(&name(1));
    assert_eq!((&r1[zb_col], &r1[vb_col], &r1[c_col]), ("", "", ""));

    // The JSON Lines form keeps numbers as numbers and absent values null.
    let out = Command::new(env!("CARGO_BIN_EXE_zsift"))
        .args(["export", "--format", "jsonl", "--log"])
        .arg(&dir)
        .output()
        .expect("export runs");
    let rows: Vec<serde_json::Value> = String::from_utf8(out.stdout)
        .expect("utf8")
        .lines()
        .map(|l| serde_json::from_str(l).expect("json"))
        .collect();
    let row = |n: &str| rows.iter().find(|r| r["target"] == n).expect(n).clone();
    let r0 = row(&name(0));
    assert_eq!(r0["z_bary"].as_f64(), zb);
    assert_eq!(r0["velocity_bary_kms"].as_f64(), vb);
    assert_eq!(r0["barycentric_correction_kms"].as_f64(), Some(corr));
    let r1 = row(&name(1));
    assert!(r1["z_bary"].is_null() && r1["barycentric_correction_kms"].is_null());
}

#[test]
fn the_worker_takes_a_queue_rows_values_first_then_the_options_then_the_file() {
    use zsift::tui::worker::{Analyser, Core};
    let dir = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/fixtures/bary_fits");
    let file = dir.join("no_site.fits");
    let meta = zsift::spectrum::read(&file, &Default::default())
        .expect("reads")
        .meta;
    let demo_site = format!(
        "{},{},{}",
        zsift::synth::demo::LONGITUDE_DEG,
        zsift::synth::demo::LATITUDE_DEG,
        zsift::synth::demo::HEIGHT_M
    );
    let option_site = "10.0,-30.0,1200";
    let core = Core {
        identifier: zsift::identify::Identifier::new(
            &zsift::lines::builtin(),
            zsift::identify::Settings::default(),
        ),
        read: Default::default(),
        bary: bary::BaryOverrides {
            site: Some(bary::parse_lonlat(option_site).expect("site")),
            ..Default::default()
        },
    };
    // Without a queue row: the option's site fills the file's gap.
    let mut target = zsift::tui::app::Target::new("no site", &file);
    let l = core.load(&target).expect("loads");
    let with_option = bary::BaryOverrides {
        site: Some(bary::parse_lonlat(option_site).expect("site")),
        ..Default::default()
    };
    let want = bary::correction_kms(&meta, &with_option).expect("computable");
    assert_eq!(l.bary.as_ref().map(|c| c.kms), Ok(want));
    // A queue row's site (queue-file columns) comes first.
    let (lon, rest) = demo_site.split_once(',').expect("lon");
    let (lat, h) = rest.split_once(',').expect("lat");
    let row = bary::overrides_from_columns(|k| match k {
        "site_lon" => Some(lon),
        "site_lat" => Some(lat),
        "site_height" => Some(h),
        _ => None,
    })
    .expect("row");
    target.bary = Some(row.clone());
    let l = core.load(&target).expect("loads");
    let want_row = bary::correction_kms(&meta, &row).expect("computable");
    assert_eq!(l.bary.as_ref().map(|c| c.kms), Ok(want_row));
    assert!((want_row - want).abs() > 1e-3, "the two sites differ");
}

#[test]
fn a_nudged_accept_logs_the_barycentric_values_of_the_nudged_redshift() {
    let tmp = tempfile::tempdir().expect("tmp");
    let dir = tmp.path().join("log");
    let mut journal = DecisionLog::new(Log::open(&dir).expect("log"), "tester");
    let mut app = fx::app();
    // Nudge up by the coarse step; the core's answer is not needed to accept.
    press(&mut app, &mut journal, ">");
    let z = app.nudge.as_ref().expect("nudged").z;
    assert!(z > fx::ZS[0]);
    press(&mut app, &mut journal, "a");
    let r = replay(&dir).expect("replay");
    let sol = r
        .state(&app.targets[0].name)
        .and_then(|s| s.solution.clone())
        .expect("solution");
    let corr = correction(0).expect("correction");
    assert_eq!(sol.z, Some(z));
    let (zb, vb) = bary::corrected(z, Some(corr));
    assert_eq!((sol.z_bary, sol.velocity_bary_kms), (zb, vb));
    assert_eq!(sol.barycentric_correction_kms, Some(corr));
}
