//! The r2r executor: runs node cores as ROS 2 nodes, one r2r node per core, all in one
//! process (one core for the per-node binaries, four for `sillage_stack`).
//!
//! Per node: raw subscriptions and untyped publishers, so every message goes through
//! sillage's own CDR codec ([`NodeRuntime`]); timers on the ROS clock (with
//! `use_sim_time:=true` at start-up they follow /clock: r2r does so once a parameter handler
//! exists, which every node has); parameters loaded by rcl from `--params-file` and `-p`,
//! validated by the core, declared with their values, and changeable at run time through the
//! standard parameter services with the same validation ([`params::ParamBridge`]). One
//! /diagnostics array per process at 1 Hz (ROS time). On SIGINT or SIGTERM every node
//! publishes a zero velocity command on its velocity outputs, then the nodes are destroyed.
//!
//! Threads: each r2r node is spun by its own blocking thread (`spin_once` in a loop); each
//! node's events (inputs and timer ticks, merged) are handled in order by one tokio task, so a
//! core is never called concurrently. r2r queues 10 messages per subscription and drops the
//! rest when a node falls behind (not countable from here): keep cores fast.
//!
//! Only r2r API that also exists under r2r's `doc-only` feature is used, so CI type-checks
//! this module without ROS.

mod params;
mod restart;

use crate::diagnostics;
use crate::names::{node_fqn, resolved_ports, ArgsError, RosArgs};
use crate::param_value::ParamValue;
use crate::qos::{Durability, QosSpec, Reliability};
use crate::runtime::{should_log, NodeRuntime, RuntimeError};
use crate::spec::NodeSpec;
use futures::stream::{self, BoxStream, SelectAll, StreamExt};
use params::{from_r2r, lock, ParamBridge};
use r2r::{Clock, Context, Node, PublisherUntyped, QosProfile};
use sillage_core::{Msg, Nanos, Qos};
use std::process::ExitCode;
use std::sync::atomic::{AtomicBool, Ordering};
use std::sync::{Arc, Mutex};
use std::time::Duration;
use thiserror::Error;
use tokio::sync::watch;

/// Errors of the r2r executor.
#[derive(Debug, Error)]
pub enum Ros2Error {
    /// A ROS call failed.
    #[error("{what}: {source}")]
    Ros {
        /// What was being done.
        what: String,
        /// r2r's error.
        source: r2r::Error,
    },
    /// The command line is not usable.
    #[error(transparent)]
    Args(#[from] ArgsError),
    /// A node could not start (parameters).
    #[error(transparent)]
    Runtime(#[from] RuntimeError),
    /// The async runtime or the signal handlers could not be set up.
    #[error("{what}: {source}")]
    Io {
        /// What was being done.
        what: &'static str,
        /// The error.
        source: std::io::Error,
    },
}

fn ros(what: impl Into<String>) -> impl FnOnce(r2r::Error) -> Ros2Error {
    let what = what.into();
    move |source| Ros2Error::Ros { what, source }
}

/// The r2r profile of a QoS class.
pub fn profile(class: Qos) -> QosProfile {
    let spec = QosSpec::of(class);
    let p = QosProfile::default().keep_last(spec.depth);
    let p = match spec.reliability {
        Reliability::Reliable => p.reliable(),
        Reliability::BestEffort => p.best_effort(),
    };
    match spec.durability {
        Durability::Volatile => p.volatile(),
        Durability::TransientLocal => p.transient_local(),
    }
}

/// Entry point of the node binaries: runs `specs` until SIGINT/SIGTERM; prints the error
/// and fails if a node cannot start.
pub fn run_main(specs: Vec<NodeSpec>) -> ExitCode {
    let runtime = tokio::runtime::Builder::new_multi_thread()
        .worker_threads(2)
        .enable_all()
        .build()
        .map_err(|source| Ros2Error::Io { what: "starting the async runtime", source });
    let result = runtime.and_then(|rt| rt.block_on(run(specs)));
    match result {
        Ok(()) => ExitCode::SUCCESS,
        Err(e) => {
            eprintln!("error: {e}");
            ExitCode::FAILURE
        }
    }
}

/// An event of one node.
enum Event {
    Input(usize, Vec<u8>),
    Timer(usize),
}

/// What the event loop of one node holds.
struct Served {
    rt: Arc<Mutex<NodeRuntime>>,
    pubs: Vec<PublisherUntyped>,
    events: SelectAll<BoxStream<'static, Event>>,
    clock: Arc<Mutex<Clock>>,
    logger: String,
}

/// ROS time [ns] of a clock (0 before the first /clock message with sim time).
fn ros_now(clock: &Mutex<Clock>) -> Nanos {
    let now = clock.lock().map_err(|_| ()).and_then(|mut c| c.get_now().map_err(|_| ()));
    now.map(|d| Nanos::try_from(d.as_nanos()).unwrap_or(Nanos::MAX)).unwrap_or(0)
}

/// Where the start-up parameters came from, for error messages.
fn params_source(args: &RosArgs) -> String {
    match (args.params_files.as_slice(), args.params.is_empty()) {
        ([], true) => "(defaults)".to_string(),
        ([one], true) => one.clone(),
        (files, _) => {
            let mut parts: Vec<String> = files.iter().map(|f| format!("--params-file {f}")).collect();
            if !args.params.is_empty() {
                parts.push("-p".to_string());
            }
            parts.join(", ")
        }
    }
}

fn timer_stream(timer: r2r::Timer, index: usize) -> BoxStream<'static, Event> {
    stream::unfold(timer, move |mut t| async move { t.tick().await.ok().map(|_| (Event::Timer(index), t)) }).boxed()
}

/// Creates one r2r node for `spec`, builds its core from the parameters rcl loaded, and wires
/// its ports.
fn host(ctx: &Context, spec: &NodeSpec, args: &RosArgs) -> Result<(Node, Served), Ros2Error> {
    let mut node = Node::create(ctx.clone(), &spec.name, "").map_err(ros(format!("creating node '{}'", spec.name)))?;
    let fqn = node.fully_qualified_name().map_err(ros("reading the node name"))?;
    let logger = node.logger().to_string();
    let flat: Vec<(String, ParamValue)> = {
        let p = node.params.lock().unwrap_or_else(std::sync::PoisonError::into_inner);
        p.iter().map(|(k, v)| (k.clone(), from_r2r(&v.value))).collect()
    };
    let rt = NodeRuntime::start(spec, &fqn, &flat, &params_source(args))?;
    let rt = Arc::new(Mutex::new(rt));
    let bridge = Arc::new(Mutex::new(ParamBridge::new(rt.clone(), logger.clone())));
    let (param_services, _changes) =
        node.make_derived_parameter_handler(bridge).map_err(ros(format!("{fqn}: parameter services")))?;
    tokio::spawn(param_services);

    let (inputs, outputs, timers) = {
        let g = lock(&rt);
        (g.inputs().to_vec(), g.outputs().to_vec(), g.timers().to_vec())
    };
    let placement = args.placement(&spec.name, "");
    let resolved = resolved_ports(lock(&rt).core(), &placement);
    r2r::log_info!(&logger, "{fqn} (expected {}) starting", node_fqn(&placement, &spec.name));
    let mut events: SelectAll<BoxStream<'static, Event>> = SelectAll::new();
    for (i, port) in inputs.iter().enumerate() {
        let sub = node
            .subscribe_raw(&port.topic, port.type_name, profile(port.qos))
            .map_err(ros(format!("{fqn}: subscribing to '{}' ({})", port.topic, port.type_name)))?;
        events.push(sub.map(move |bytes| Event::Input(i, bytes)).boxed());
        if let Some(srv) = restart::service(&mut node, i, port).map_err(ros(format!("{fqn}: the '{}' service", restart::TOPIC)))? {
            events.push(srv);
        }
    }
    let mut pubs = Vec::new();
    for port in &outputs {
        pubs.push(
            node.create_publisher_untyped(&port.topic, port.type_name, profile(port.qos))
                .map_err(ros(format!("{fqn}: publishing '{}' ({})", port.topic, port.type_name)))?,
        );
    }
    for (dir, declared, topic, type_name) in resolved {
        r2r::log_info!(&logger, "{dir:>3} {topic} [{type_name}] (declared '{declared}')");
    }
    for (i, &period) in timers.iter().enumerate() {
        let t = node
            .create_timer(Duration::from_nanos(u64::try_from(period).unwrap_or(1)))
            .map_err(ros(format!("{fqn}: timer {i}")))?;
        events.push(timer_stream(t, i));
    }
    let clock = node.get_ros_clock();
    Ok((node, Served { rt, pubs, events, clock, logger }))
}

/// Handles one node's events in order until `stop`; then publishes the stop commands.
async fn serve(mut s: Served, mut stop: watch::Receiver<bool>) {
    let mut problems: u64 = 0;
    loop {
        let ev = tokio::select! {
            biased;
            _ = stop.changed() => None,
            ev = s.events.next() => ev,
        };
        let Some(ev) = ev else { break };
        let now = ros_now(&s.clock);
        let mut failures: Vec<(usize, String)> = Vec::new();
        let pubs = &s.pubs;
        let mut sink = |out: usize, bytes: &[u8]| {
            if let Some(Err(e)) = pubs.get(out).map(|p| p.publish_raw(bytes)) {
                failures.push((out, e.to_string()));
            }
        };
        let mut rt = lock(&s.rt);
        let result = match ev {
            Event::Input(i, bytes) => rt.on_input(now, i, &bytes, &mut sink),
            Event::Timer(t) => rt.on_timer(now, t, &mut sink),
        };
        for (out, e) in &failures {
            rt.note_publish_error(*out, e);
        }
        drop(rt);
        let messages = result.err().map(|e| e.to_string()).into_iter().chain(failures.into_iter().map(|(_, e)| e));
        for m in messages {
            problems += 1;
            if should_log(problems) {
                r2r::log_warn!(&s.logger, "{m} (occurrence {problems}; logging 1, 10, 100, ...)");
            }
        }
    }
    let now = ros_now(&s.clock);
    let pubs = &s.pubs;
    let result = lock(&s.rt).stop_commands(now, &mut |out, bytes| {
        let _ = pubs.get(out).map(|p| p.publish_raw(bytes));
    });
    match result {
        Ok(()) => r2r::log_info!(&s.logger, "stopped (zero velocity published on velocity outputs)"),
        Err(e) => r2r::log_warn!(&s.logger, "stopping: {e}"),
    }
}

/// Publishes every hosted node's diagnostics on /diagnostics once per period (ROS time).
async fn publish_diagnostics(
    all: Vec<Arc<Mutex<NodeRuntime>>>,
    publisher: PublisherUntyped,
    mut timer: r2r::Timer,
    clock: Arc<Mutex<Clock>>,
    logger: String,
    mut stop: watch::Receiver<bool>,
) {
    let mut buf = Vec::with_capacity(1024);
    let mut failures: u64 = 0;
    loop {
        let tick = tokio::select! {
            biased;
            _ = stop.changed() => break,
            t = timer.tick() => t,
        };
        if tick.is_err() {
            break;
        }
        let now = ros_now(&clock);
        let array = {
            let mut guards: Vec<_> = all.iter().map(|rt| lock(rt)).collect();
            diagnostics::collect(now, guards.iter_mut().map(|g| &mut **g))
        };
        let sent = Msg::DiagnosticArray(array).encode_into(&mut buf).map_err(|e| e.to_string());
        if let Err(e) = sent.and_then(|()| publisher.publish_raw(&buf).map_err(|e| e.to_string())) {
            failures += 1;
            if should_log(failures) {
                r2r::log_warn!(&logger, "publishing diagnostics failed: {e} (occurrence {failures})");
            }
        }
    }
}

/// Waits for SIGINT (Ctrl-C, what `ros2 launch` sends first) or SIGTERM.
async fn shutdown_signal() -> Result<(), Ros2Error> {
    #[cfg(unix)]
    {
        use tokio::signal::unix::{signal, SignalKind};
        let mut term = signal(SignalKind::terminate()).map_err(|source| Ros2Error::Io { what: "installing the SIGTERM handler", source })?;
        tokio::select! {
            r = tokio::signal::ctrl_c() => r.map_err(|source| Ros2Error::Io { what: "waiting for SIGINT", source }),
            _ = term.recv() => Ok(()),
        }
    }
    #[cfg(not(unix))]
    {
        tokio::signal::ctrl_c().await.map_err(|source| Ros2Error::Io { what: "waiting for Ctrl-C", source })
    }
}

/// Runs `specs` as ROS 2 nodes in this process until SIGINT or SIGTERM.
pub async fn run(specs: Vec<NodeSpec>) -> Result<(), Ros2Error> {
    let ctx = Context::create().map_err(ros("initialising ROS (rcl_init)"))?;
    let args = RosArgs::parse(std::env::args())?;
    args.check_shared_process(specs.len())?;

    let mut nodes = Vec::new();
    let mut served = Vec::new();
    for spec in &specs {
        let (node, s) = host(&ctx, spec, &args)?;
        nodes.push(node);
        served.push(s);
    }
    let (stop_tx, stop_rx) = watch::channel(false);
    let mut tasks = Vec::new();
    if let (Some(first), Some(s)) = (nodes.first_mut(), served.first()) {
        let publisher = first
            .create_publisher_untyped(diagnostics::TOPIC, "diagnostic_msgs/msg/DiagnosticArray", profile(Qos::Reliable))
            .map_err(ros("publishing /diagnostics"))?;
        let period = Duration::from_nanos(u64::try_from(diagnostics::PERIOD).unwrap_or(1_000_000_000));
        let timer = first.create_timer(period).map_err(ros("diagnostics timer"))?;
        let all = served.iter().map(|s| s.rt.clone()).collect();
        tasks.push(tokio::spawn(publish_diagnostics(all, publisher, timer, s.clock.clone(), s.logger.clone(), stop_rx.clone())));
    }
    for s in served {
        tasks.push(tokio::spawn(serve(s, stop_rx.clone())));
    }
    let spinning = Arc::new(AtomicBool::new(true));
    let spinners: Vec<_> = nodes
        .into_iter()
        .map(|mut node| {
            let spinning = spinning.clone();
            std::thread::spawn(move || {
                while spinning.load(Ordering::Relaxed) {
                    node.spin_once(Duration::from_millis(20));
                }
                node // destroyed by the caller, after every task is done with its publishers
            })
        })
        .collect();

    let signal = shutdown_signal().await;
    let _ = stop_tx.send(true);
    for t in tasks {
        let _ = t.await;
    }
    spinning.store(false, Ordering::Relaxed);
    for s in spinners {
        // A panicked spinner has already dropped its node; nothing else to clean.
        if let Ok(node) = s.join() {
            drop(node);
        }
    }
    signal
}
