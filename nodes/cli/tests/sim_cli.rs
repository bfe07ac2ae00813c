//! `sillage sim`: `--episode K` reruns episode K of a batch exactly, `--record K`, the
//! ablation switch shows in the outputs, `--jobs 0` is refused, the summary lists every file.

use std::path::PathBuf;
use std::process::Command;

fn root() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("../..")
}

fn tmp(name: &str) -> PathBuf {
    let d = std::env::temp_dir().join(format!("sillage-sim-cli-{}-{name}", std::process::id()));
    let _ = std::fs::remove_dir_all(&d);
    d
}

fn sillage(args: &[&str]) -> (bool, String) {
    let out = Command::new(env!("CARGO_BIN_EXE_sillage")).current_dir(root()).args(args).output().expect("runs");
    (out.status.success(), format!("{}{}", String::from_utf8_lossy(&out.stdout), String::from_utf8_lossy(&out.stderr)))
}

fn episodes(dir: &std::path::Path) -> Vec<serde_json::Value> {
    let text = std::fs::read_to_string(dir.join("episodes.json")).expect("episodes.json");
    serde_json::from_str(&text).expect("json")
}

#[test]
fn one_episode_of_a_batch_is_reproduced_alone_and_every_file_is_listed() {
    let (batch, one) = (tmp("batch"), tmp("one"));
    let common = ["sim", "config/scenarios/demo.yaml", "--quiet", "--no-plots", "--time-limit", "8", "--seed", "5"];
    let (ok, text) = sillage(&[&common[..], &["--episodes", "3", "--out", batch.to_str().expect("utf-8")]].concat());
    assert!(ok, "{text}");
    let (ok, text) = sillage(&[&common[..], &["--episode", "2", "--record", "2", "--out", one.to_str().expect("utf-8")]].concat());
    assert!(ok, "{text}");
    let (b, o) = (episodes(&batch), episodes(&one));
    assert_eq!(o.len(), 1);
    assert_eq!(o[0]["spec"], serde_json::json!({"index": 2, "seed": 7, "start_pose": 2}));
    assert_eq!(o[0], b[2], "episode 2 alone equals episode 2 of the batch");
    for f in ["params.yaml", "episodes.json", "summary.json", "summary.txt", "bag"] {
        let p = one.join(f);
        assert!(p.exists(), "{f} written");
        assert!(text.contains(&format!("wrote {}", p.display())), "{f} listed:\n{text}");
    }
    assert!(text.contains("episode 2 (world seed 7)"), "{text}");
    let _ = std::fs::remove_dir_all(&batch);
    let _ = std::fs::remove_dir_all(&one);
}

#[test]
fn bad_selections_are_refused_and_the_ablation_is_reported() {
    let out = tmp("bad");
    let dir = out.to_str().expect("utf-8");
    let (ok, text) = sillage(&["sim", "config/scenarios/demo.yaml", "--jobs", "0", "--out", dir]);
    assert!(!ok && text.contains("--jobs must be at least 1"), "{text}");
    let (ok, text) = sillage(&["sim", "config/scenarios/demo.yaml", "--episodes", "2", "--record", "4", "--out", dir]);
    assert!(!ok && text.contains("--record 4: episode 4 is not run"), "{text}");
    let (ok, text) = sillage(&["sim", "config/scenarios/demo.yaml", "--record", "some", "--out", dir]);
    assert!(!ok && text.contains("expected an episode number or `all`"), "{text}");
    let args = ["sim", "config/scenarios/demo.yaml", "--episodes", "1", "--time-limit", "3", "--quiet", "--no-plots", "--ablate-odor-cues", "--out", dir];
    let (ok, text) = sillage(&args);
    assert!(ok, "{text}");
    assert!(text.contains("ODOR CUES ABLATED"), "{text}");
    let summary: serde_json::Value = serde_json::from_str(&std::fs::read_to_string(out.join("summary.json")).expect("summary")).expect("json");
    assert_eq!(summary["odor_cues_ablated"], serde_json::json!(true));
    let params = std::fs::read_to_string(out.join("params.yaml")).expect("params");
    assert!(params.contains("use_bearing: false") && params.contains("use_posterior: false"), "{params}");
    let _ = std::fs::remove_dir_all(&out);
}
