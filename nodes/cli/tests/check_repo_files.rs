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

#[test]
fn kinds_come_from_content_wherever_the_file_lies_and_empty_selections_fail() {
    let dir = std::env::temp_dir().join(format!("sillage-check-kinds-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(dir.join("empty")).expect("dir");
    // A valid scenario outside any scenarios/ folder.
    let sc = dir.join("my_hall.yaml");
    std::fs::copy(repo().join("config/scenarios/demo.yaml"), &sc).expect("copy");
    let (ok, text) = sillage_check(&[sc.to_str().expect("utf-8")]);
    assert!(ok && text.contains("ok (scenario)"), "{text}");
    // A scenario lacking a required key: the dotted key, the file once.
    let broken = dir.join("broken.yaml");
    let t = std::fs::read_to_string(&sc).expect("read").replace("success_radius:", "# success_radius:");
    std::fs::write(&broken, t).expect("write");
    let (ok, text) = sillage_check(&[broken.to_str().expect("utf-8")]);
    let b = broken.display().to_string();
    assert!(!ok && text.contains(&format!("{b}:success_radius: error: missing")) && text.matches(&b).count() == 1, "{text}");
    // An indentation error: line and column.
    let bad = dir.join("indent.yaml");
    std::fs::write(&bad, "arbiter:\n  ros__parameters:\n    rate: 1.0\n   gain: 2.0\n").expect("write");
    let (ok, text) = sillage_check(&[bad.to_str().expect("utf-8")]);
    assert!(!ok && text.contains("YAML syntax error at line 4, column "), "{text}");
    // Nothing to check is an error, not a pass.
    let (ok, text) = sillage_check(&[dir.join("empty").to_str().expect("utf-8")]);
    assert!(!ok && text.contains("nothing to check"), "{text}");
    std::fs::remove_dir_all(&dir).ok();
}

#[test]
fn a_closed_pipe_ends_the_command_quietly() {
    // `sillage check config | head -1`: the reader has gone away. Here its end of the pipe is
    // closed before the command starts, so the first write fails whatever the timing. The
    // process must end by SIGPIPE (signal 13, as cat, grep and ls do), not panic (exit 101).
    use std::os::unix::process::ExitStatusExt;
    for args in [vec!["check", "config", "launch"], vec!["bag", "info", "tests/fixtures/demo/demo_bag"], vec!["bag", "info", "--json", "tests/fixtures/demo/demo_bag"]] {
        let (reader, writer) = std::io::pipe().expect("pipe");
        drop(reader);
        let o = Command::new(env!("CARGO_BIN_EXE_sillage")).args(&args).current_dir(repo()).stdout(writer).output().expect("runs");
        let err = String::from_utf8_lossy(&o.stderr);
        assert!(!err.contains("panicked"), "{args:?}: {err}");
        assert_eq!(o.status.signal(), Some(13), "{args:?}: {:?} {err}", o.status);
    }
}
