//! Where results may be written: never over a file the run reads (data or profile, by path, symbolic
//! or hard link), never two outputs onto one file, devices and FIFOs written in place, symbolic links
//! kept, no temporary file left behind by a signal, closed streams never a panic.

#![allow(clippy::unwrap_used, clippy::expect_used)] // test code: a failed unwrap is a failed test

mod common;

use std::path::{Path, PathBuf};
use std::time::{Duration, SystemTime};

use common::{repo, runcal};

fn demo() -> String {
    common::demo_path()
}

fn tmpdir() -> tempfile::TempDir {
    tempfile::tempdir().unwrap()
}

fn s(p: &Path) -> String {
    p.display().to_string()
}

fn temps_in(dir: &Path) -> Vec<PathBuf> {
    std::fs::read_dir(dir)
        .unwrap()
        .flatten()
        .map(|e| e.path())
        .filter(|p| {
            let n = p.file_name().unwrap().to_string_lossy().into_owned();
            n.starts_with(".runcal-") && n.ends_with(".tmp")
        })
        .collect()
}

/// A saved profile of the demo league in `dir`.
fn profile_in(dir: &Path) -> PathBuf {
    let p = dir.join("league.json");
    runcal()
        .args(["fit", &demo(), "--save-profile", &s(&p), "-q"])
        .assert()
        .success();
    p
}

#[test]
fn output_onto_the_profile_is_refused_by_path_and_links() {
    let dir = tmpdir();
    let p = profile_in(dir.path());
    let before = std::fs::read(&p).unwrap();
    let hard = dir.path().join("hard.json");
    std::fs::hard_link(&p, &hard).unwrap();
    let soft = dir.path().join("soft.json");
    std::os::unix::fs::symlink(&p, &soft).unwrap();
    for target in [&p, &hard, &soft] {
        for cmd in [
            vec!["check", "--no-drift", "--max-mae", "1", "-o"],
            vec!["luck", "-o"],
            vec!["luck", "--plot"],
        ] {
            let mut args: Vec<String> = cmd.iter().map(|a| a.to_string()).collect();
            args.push(s(target));
            args.extend([demo(), "--profile".into(), s(&p)]);
            let out = runcal().args(&args).output().unwrap();
            assert_eq!(out.status.code(), Some(2), "{args:?}");
            let err = String::from_utf8_lossy(&out.stderr);
            assert!(err.contains("input files"), "{err}");
        }
    }
    assert_eq!(
        std::fs::read(&p).unwrap(),
        before,
        "the profile is unchanged"
    );
}

#[test]
fn two_outputs_on_one_path_are_refused_before_any_work() {
    let dir = tmpdir();
    let x = s(&dir.path().join("x.out"));
    for extra in [["--save-profile", &x], ["--plot", &x]] {
        let out = runcal()
            .args(["fit", &demo(), "-o", &x])
            .args(extra)
            .output()
            .unwrap();
        assert_eq!(out.status.code(), Some(2));
        assert!(String::from_utf8_lossy(&out.stderr).contains("name the same file"));
        assert!(!Path::new(&x).exists(), "nothing was written");
    }
}

#[test]
fn dev_null_is_written_in_place_not_replaced() {
    use std::os::unix::fs::FileTypeExt;
    runcal()
        .args([
            "fit",
            &demo(),
            "-o",
            "/dev/null",
            "--plot",
            "/dev/null",
            "-q",
        ])
        .assert()
        .success();
    let m = std::fs::metadata("/dev/null").unwrap();
    assert!(
        m.file_type().is_char_device(),
        "/dev/null is still a device"
    );
}

#[test]
fn a_fifo_is_written_through() {
    let dir = tmpdir();
    let fifo = dir.path().join("pipe");
    common::mkfifo(&fifo);
    let reader = {
        let f = fifo.clone();
        std::thread::spawn(move || std::fs::read_to_string(f).unwrap())
    };
    runcal()
        .args(["fit", &demo(), "--format", "json", "-o", &s(&fifo)])
        .assert()
        .success();
    let text = reader.join().unwrap();
    assert!(text.contains("\"schema\": \"runcal.fit/2\""), "{text}");
    assert!(temps_in(dir.path()).is_empty());
}

#[test]
fn a_symbolic_link_is_kept_and_its_file_replaced() {
    let dir = tmpdir();
    let real = dir.path().join("real.json");
    std::fs::write(&real, "old").unwrap();
    let link = dir.path().join("link.json");
    std::os::unix::fs::symlink(&real, &link).unwrap();
    runcal()
        .args(["fit", &demo(), "--format", "json", "-o", &s(&link)])
        .assert()
        .success();
    assert!(
        std::fs::symlink_metadata(&link)
            .unwrap()
            .file_type()
            .is_symlink()
    );
    assert!(
        std::fs::read_to_string(&real)
            .unwrap()
            .contains("runcal.fit/2")
    );
}

#[test]
fn proc_self_fd_1_writes_to_stdout() {
    let out = runcal()
        .args(["fit", &demo(), "--format", "json", "-o", "/proc/self/fd/1"])
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(0));
    assert!(String::from_utf8_lossy(&out.stdout).contains("runcal.fit/2"));
}

#[test]
fn a_directory_or_an_empty_path_is_refused() {
    let dir = tmpdir();
    let out = runcal()
        .args(["fit", &demo(), "-o", &s(dir.path())])
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&out.stderr).contains("is a directory"));
    let out = runcal().args(["fit", &demo(), "-o", ""]).output().unwrap();
    assert_eq!(out.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&out.stderr).contains("cannot write to an empty path"));
}

/// Start a long `simulate --out`, wait for its temporary file, send `signal`, and check that the
/// temporary file is gone and the target was never created.
fn interrupt_leaves_no_temp(signal: &str) {
    let dir = tmpdir();
    let target = dir.path().join("big.csv");
    let mut child = std::process::Command::new(assert_cmd::cargo::cargo_bin("runcal"))
        .args([
            "simulate",
            "--teams",
            "30",
            "--seasons",
            "4000",
            "--games",
            "162",
        ])
        .args(["--game-log", "--out", &s(&target)])
        .spawn()
        .unwrap();
    let start = std::time::Instant::now();
    while temps_in(dir.path()).is_empty() && start.elapsed() < Duration::from_secs(30) {
        std::thread::sleep(Duration::from_millis(20));
    }
    assert!(
        !temps_in(dir.path()).is_empty(),
        "the run made a temporary file"
    );
    std::thread::sleep(Duration::from_millis(200));
    let pid = child.id().to_string();
    std::process::Command::new("kill")
        .args(["-s", signal, &pid])
        .status()
        .unwrap();
    let status = child.wait().unwrap();
    assert!(!status.success(), "{signal} ended the run");
    assert!(
        temps_in(dir.path()).is_empty(),
        "{signal} left a temporary file"
    );
    assert!(!target.exists());
}

#[test]
fn sigint_removes_the_temporary_file() {
    interrupt_leaves_no_temp("INT");
}

#[test]
fn sigterm_and_sighup_remove_the_temporary_file() {
    interrupt_leaves_no_temp("TERM");
    interrupt_leaves_no_temp("HUP");
}

#[test]
fn stale_temporary_files_older_than_an_hour_are_cleaned() {
    let dir = tmpdir();
    let stale = dir.path().join(".runcal-stale1.tmp");
    let fresh = dir.path().join(".runcal-fresh1.tmp");
    let other = dir.path().join(".other-old.tmp");
    for p in [&stale, &fresh, &other] {
        std::fs::write(p, "x").unwrap();
    }
    let two_hours_ago = SystemTime::now() - Duration::from_secs(7200);
    for p in [&stale, &other] {
        std::fs::File::options()
            .write(true)
            .open(p)
            .unwrap()
            .set_modified(two_hours_ago)
            .unwrap();
    }
    runcal()
        .args(["fit", &demo(), "-q", "-o", &s(&dir.path().join("out.txt"))])
        .assert()
        .success();
    assert!(
        !stale.exists(),
        "an hour-old temporary file of ours is removed"
    );
    assert!(fresh.exists(), "a recent one may belong to a running write");
    assert!(other.exists(), "files of other naming are left alone");
}

#[test]
fn closed_stderr_and_stdout_never_panic() {
    // `runcal fit bad.csv 2>&1 | true`: the error goes to a closed pipe; exit 2, not 101.
    let dir = tmpdir();
    let bad = dir.path().join("bad.csv");
    std::fs::write(&bad, "a,b\n1,2\n").unwrap();
    let bin = assert_cmd::cargo::cargo_bin("runcal");
    for (cmd, want) in [
        (
            format!("'{}' fit '{}' 2>&1 | true", bin.display(), s(&bad)),
            2,
        ),
        (
            format!(
                "'{}' simulate --seasons 2000 | head -1 >/dev/null",
                bin.display()
            ),
            0,
        ),
        (
            format!(
                "'{}' simulate --seasons 2000 --game-log 2>&1 | head -1 >/dev/null",
                bin.display()
            ),
            0,
        ),
        (
            format!(
                "'{}' check '{}' --profile '{}' --max-mae 0 --no-drift 2>&1 | true",
                bin.display(),
                demo(),
                s(&repo().join("demo-data/meridian-profile.json"))
            ),
            1,
        ),
    ] {
        let out = std::process::Command::new("bash")
            .args(["-c", &format!("{cmd}; exit ${{PIPESTATUS[0]}}")])
            .output()
            .unwrap();
        assert_eq!(out.status.code(), Some(want), "{cmd}");
    }
}
