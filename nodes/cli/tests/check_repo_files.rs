//! Every launch file, parameter file and scenario in the repository passes `sillage check`
//! (run as the command itself), and a broken file makes it fail with the file and key named.

use std::path::PathBuf;
use std::process::Command;

fn repo() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("../..")
}

fn sillage_check(args: &[&str]) -> (bool, String) {
    let out = Command::new(env!("CARGO_BIN_EXE_sillage")).arg("check").args(args).current_dir(repo()).output().expect("runs sillage");
    let text = format!("{}{}", String::from_utf8_lossy(&out.stdout), String::from_utf8_lossy(&out.stderr));
    (out.status.success(), text)
}

#[test]
fn every_repository_file_passes() {
    let (ok, text) = sillage_check(&["launch", "config"]);
    assert!(ok, "sillage check launch config failed:\n{text}");
    let warnings: Vec<&str> = text.lines().filter(|l| l.contains(": warning: ")).collect();
    assert!(warnings.is_empty(), "unexpected warnings: {warnings:#?}");
    for f in ["launch/robot.launch.xml", "launch/stack.launch.xml", "launch/sim.launch.xml", "config/sillage.yaml", "config/robot_example.yaml"] {
        assert!(text.contains(f), "{f} was not checked:\n{text}");
    }
}

#[test]
fn a_broken_file_fails_naming_file_and_key() {
    let dir = std::env::temp_dir().join(format!("sillage-check-{}", std::process::id()));
    std::fs::create_dir_all(&dir).expect("dir");
    let bad = dir.join("bad.yaml");
    std::fs::write(&bad, "/robot1/arbiter:\n  ros__parameters:\n    no_such_parameter: 1.0\n/**/arbiter:\n  ros__parameters: {}\n").expect("write");
    let path = bad.display().to_string();
    let (ok, text) = sillage_check(&[&path]);
    assert!(!ok, "must fail:\n{text}");
    assert!(text.contains(&format!("{path}:/robot1/arbiter.ros__parameters.no_such_parameter: error:")), "{text}");
    assert!(text.contains(&format!("{path}:/**/arbiter: warning:")), "{text}");
    let (ok, text) = sillage_check(&["--kind", "scenario", &path]);
    assert!(!ok && text.contains(&path), "{text}");
    std::fs::remove_dir_all(&dir).ok();
}
