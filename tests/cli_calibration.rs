//! The calibration a luck report applies: which fit a profile saves, what older profiles fall back
//! to, and where the noise model's dispersion comes from.

#![allow(clippy::unwrap_used, clippy::expect_used)] // test code: a failed unwrap is a failed test

mod common;

use assert_cmd::Command;
use common::{close, f, runcal};
use serde_json::Value;

fn json(cmd: &mut Command) -> Value {
    serde_json::from_slice(&cmd.assert().success().get_output().stdout).unwrap()
}

#[test]
fn save_profile_keeps_the_model_named_first_and_says_which() {
    let dir = tempfile::tempdir().unwrap();
    for (models, saved) in [
        ("pythagorean,pythagenport", "pythagorean"),
        ("pythagenport,pythagorean", "pythagenport"),
    ] {
        let path = dir.path().join("p.json");
        let out = runcal()
            .args([
                "fit",
                "demo-data/meridian-league.csv",
                "--top",
                "0",
                "--model",
                models,
            ])
            .arg("--save-profile")
            .arg(&path)
            .assert()
            .success()
            .get_output()
            .clone();
        let p: serde_json::Value =
            serde_json::from_str(&std::fs::read_to_string(&path).unwrap()).unwrap();
        // In-sample, Pythagenport is ahead on the demo by 2.5e-6 of log-loss; the first named wins.
        assert_eq!(p["model"], saved, "--model {models}");
        let note = String::from_utf8(out.stderr).unwrap();
        assert!(note.contains(&format!("saved {saved}:")), "{note}");
    }
}

#[test]
fn grouped_over_and_under_lists_name_no_single_group_fit() {
    let out = runcal()
        .args([
            "fit",
            "demo-data/meridian-league.csv",
            "--by",
            "season",
            "--top",
            "2",
            "-q",
        ])
        .assert()
        .success()
        .get_output()
        .stdout
        .clone();
    let out = String::from_utf8(out).unwrap();
    assert!(out.contains("Most wins above their scoring (each group's own pythagorean fit)"));
    assert!(!out.contains("(pythagorean, exponent"), "{out}");
}

#[test]
fn older_profiles_load_and_say_which_noise_model_they_fall_back_to() {
    let dir = tempfile::tempdir().unwrap();
    let text =
        std::fs::read_to_string(common::repo().join("demo-data/meridian-profile.json")).unwrap();
    let mut p: Value = serde_json::from_str(&text).unwrap();
    let map = p.as_object_mut().unwrap();
    // A profile written before the run-based constant existed: (1 − φ)·k is derived on load.
    map.remove("run_based_regression_games");
    let old = dir.path().join("old.json");
    std::fs::write(&old, serde_json::to_string(&p).unwrap()).unwrap();
    let args = [
        "luck",
        "demo-data/meridian-2026-games.csv",
        "--games",
        "--as-of",
        "2026-07-15",
        "--format",
        "json",
        "--profile",
    ];
    let v = json(runcal().args(args).arg(&old));
    let (k, phi) = (88.117_689_493_481_83, 0.386_965_048_231_558_86);
    close(
        f(&v["outlook"]["regression_games"]),
        (1.0 - phi) * k,
        1e-9,
        "derived constant",
    );
    // A profile without a dispersion (an MAE fit saves none): the dispersion of these data under
    // the profile's model, said so on stderr.
    let map = p.as_object_mut().unwrap();
    map.insert("dispersion".into(), Value::Null);
    std::fs::write(&old, serde_json::to_string(&p).unwrap()).unwrap();
    let out = runcal()
        .args(args)
        .arg(&old)
        .assert()
        .success()
        .get_output()
        .clone();
    let v: Value = serde_json::from_slice(&out.stdout).unwrap();
    assert_eq!(v["noise"]["source"], "data-unfitted");
    assert_eq!(v["noise"]["model"], "quasi-binomial");
    let stderr = String::from_utf8(out.stderr).unwrap();
    assert!(
        stderr.contains("the profile saves no dispersion"),
        "{stderr}"
    );
}

#[test]
fn bad_dispersions_are_refused() {
    for bad in ["0", "-1", "nan", "inf"] {
        runcal()
            .args(["luck", "demo-data/meridian-league.csv"])
            .arg(format!("--dispersion={bad}"))
            .assert()
            .code(2)
            .stderr(predicates::str::contains("--dispersion"))
            .stderr(predicates::str::contains("expected a positive number"));
    }
}

#[test]
fn without_a_profile_the_fit_on_the_data_sets_the_noise() {
    let v = json(runcal().args([
        "luck",
        "demo-data/meridian-league.csv",
        "--format",
        "json",
        "-q",
    ]));
    // The same rows as the demo profile's fit: the same Pearson χ²/df.
    assert_eq!(v["noise"]["source"], "data");
    close(
        f(&v["noise"]["dispersion"]),
        0.386_965_048_231_558_86,
        1e-12,
        "dispersion",
    );
    let given = json(runcal().args([
        "luck",
        "demo-data/meridian-league.csv",
        "--dispersion",
        "1",
        "--format",
        "json",
        "-q",
    ]));
    assert_eq!(given["noise"]["source"], "given");
    // φ = 1 is the binomial z: √φ times smaller than the quasi-binomial one.
    let (q, b) = (
        &v["teams"][0]["gap"]["luck_z"],
        &given["teams"][0]["gap"]["luck_z"],
    );
    close(
        f(b),
        f(q) * 0.386_965_048_231_558_86_f64.sqrt(),
        1e-9,
        "z under φ = 1",
    );
}
