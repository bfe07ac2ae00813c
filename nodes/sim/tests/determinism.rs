//! The determinism contract of the simulator: the same scenario and seed give bit-identical
//! messages (run A == run B, also when run on another thread), and replaying A's graph inputs
//! from its recorded MCAP bag through the stack built from A's effective parameter file
//! reproduces every node output of A (cmd_vel, search_state and the rest) bit for bit.

use sillage_bag::replay::{replay, Inputs};
use sillage_bag::{Bag, BagWriter, QosProfile, ReadOptions, WriterOptions};
use sillage_core::executor::{remap_topic, Placement, Record};
use sillage_core::{Nanos, NodeCore, Qos};
use sillage_sim::{EpisodeResult, EpisodeSpec, RunOptions, Sim, StackSetup, WorldParams};
use sillage_stack::StackConfig;
use sillage_world::Scenario;
use std::collections::{HashMap, HashSet};
use std::path::PathBuf;

/// (delivery time, topic, publisher, CDR bytes) of every delivered message.
type Log = Vec<(Nanos, String, Option<String>, Vec<u8>)>;

fn demo_sim(seconds: f64) -> Sim {
    let path = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("../../config/scenarios/demo.yaml");
    let scenario = Scenario::from_path(&path).unwrap_or_else(|e| panic!("{e}"));
    let options = RunOptions { time_limit: Some(seconds), halt_timeout: 1e9, ..Default::default() };
    // The reactive strategy turns toward the bearing from the first odor on, so a short
    // episode exercises every node and the commands.
    let stack = StackSetup { strategy: Some("reactive".into()), ..Default::default() };
    Sim { scenario, stack, world: WorldParams::default(), options }
}

fn run(sim: &Sim, spec: EpisodeSpec) -> (Log, EpisodeResult) {
    let mut log = Log::new();
    let r = sim
        .run_episode(spec, &mut |r: &Record| {
            let bytes = r.msg.encode().unwrap_or_else(|e| panic!("encode {}: {e}", r.topic));
            log.push((r.stamp, r.topic.to_string(), r.publisher.map(str::to_string), bytes));
        })
        .unwrap_or_else(|e| panic!("episode: {e}"));
    (log, r)
}

fn out_dir(name: &str) -> PathBuf {
    let d = PathBuf::from(env!("CARGO_TARGET_TMPDIR")).join(name);
    let _ = std::fs::remove_dir_all(&d);
    std::fs::create_dir_all(&d).unwrap_or_else(|e| panic!("{}: {e}", d.display()));
    d
}

#[test]
#[allow(clippy::result_large_err)] // the replay callback's error type is sillage-bag's
fn same_seed_same_messages_and_replay_reproduces_the_outputs() {
    let sim = demo_sim(45.0);
    let spec = EpisodeSpec::nth(&sim.scenario, 7, 0);
    let (a, ra) = run(&sim, spec);
    let (b, rb) = run(&sim, spec);
    assert_eq!(a.len(), b.len());
    assert!(a == b, "run A and run B differ");
    assert_eq!(ra, rb);
    let on_thread = std::thread::scope(|s| s.spawn(|| run(&sim, spec)).join().unwrap_or_else(|_| panic!("thread")));
    assert!(on_thread.0 == a, "a run on another thread differs");
    let commands = a.iter().filter(|m| m.1 == "/cmd_vel").count();
    let moving = ra.path_length;
    assert!(commands > 400 && moving > 0.5, "{commands} commands, path {moving} m: the episode must exercise the loop");

    // Record A into a bag with the effective parameters, as `sillage sim --record` does.
    let dir = out_dir("determinism");
    let built = sim.build_stack().unwrap_or_else(|e| panic!("{e}"));
    let params = dir.join("params.yaml");
    std::fs::write(&params, sillage_sim::setup::effective_params_text(&built, "", &[])).unwrap_or_else(|e| panic!("{e}"));
    let mut qos: HashMap<String, Qos> = HashMap::new();
    let mut subscribed = HashSet::new();
    let mut published = HashSet::new();
    let placement = Placement::default();
    for (_, i) in &built.nodes {
        let n: &dyn NodeCore = built.executor.node(*i).unwrap_or_else(|| panic!("node"));
        for p in n.inputs() {
            let t = remap_topic(&p.topic, &placement, n.name());
            qos.insert(t.clone(), p.qos);
            subscribed.insert((t, p.type_name));
        }
        for p in n.outputs() {
            let t = remap_topic(&p.topic, &placement, n.name());
            qos.insert(t.clone(), p.qos);
            published.insert(t);
        }
    }
    let mut writer = BagWriter::create(dir.join("bag"), WriterOptions::default()).unwrap_or_else(|e| panic!("{e}"));
    sim.run_episode(spec, &mut |r: &Record| {
        let q = QosProfile::from(qos.get(r.topic).copied().unwrap_or(Qos::Reliable));
        writer.write_on(r.topic, r.stamp, r.msg, &[q]).unwrap_or_else(|e| panic!("write {}: {e}", r.topic));
    })
    .unwrap_or_else(|e| panic!("{e}"));
    writer.finish().unwrap_or_else(|e| panic!("{e}"));

    // Replay the bag's graph inputs through a stack built from the parameter file alone.
    let bag = Bag::open(dir.join("bag")).unwrap_or_else(|e| panic!("{e}"));
    let inputs = Inputs {
        inject: subscribed.into_iter().filter(|(t, _)| !published.contains(t)).collect(),
        outputs: published.clone(),
    };
    let cfg = StackConfig { params_file: Some(params), ..Default::default() };
    let mut ex = sillage_stack::build(&cfg).unwrap_or_else(|e| panic!("{e}"));
    let mut messages = bag.messages(&ReadOptions::default()).unwrap_or_else(|e| panic!("{e}"));
    let mut replayed = Log::new();
    let outcome = replay(
        &mut ex,
        &mut messages,
        &inputs,
        &mut |r: &Record| {
            let bytes = r.msg.encode().unwrap_or_else(|e| panic!("{e}"));
            replayed.push((r.stamp, r.topic.to_string(), r.publisher.map(str::to_string), bytes));
            Ok(())
        },
        &mut |_| {},
    );
    assert!(outcome.error.is_none(), "{:?}", outcome.error);
    let node_outputs = |log: &Log| -> Log { log.iter().filter(|m| m.2.is_some() && published.contains(&m.1)).cloned().collect() };
    let (want, got) = (node_outputs(&a), node_outputs(&replayed));
    for topic in ["/cmd_vel", "/search_state", "/odor_events", "/odor_bearing", "/plume_features"] {
        let n = want.iter().filter(|m| m.1 == topic).count();
        assert!(n > 0, "no {topic} in run A");
        assert_eq!(got.iter().filter(|m| m.1 == topic).count(), n, "{topic} count");
    }
    if let Some(i) = want.iter().zip(&got).position(|(x, y)| x != y) {
        let ty = |t: &str| built.executor.topic_type(t).unwrap_or("?");
        let show = |m: &(Nanos, String, Option<String>, Vec<u8>)| format!("{} {} {:?}", m.0, m.1, sillage_core::Msg::decode(ty(&m.1), &m.3));
        panic!("first difference at output {i}:\n A      {}\n replay {}", show(&want[i]), show(&got[i]));
    }
    assert_eq!(want.len(), got.len());
}
