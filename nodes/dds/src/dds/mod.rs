//! The DDS executor (feature `dds`): the [`Engine`] driven by a single-threaded loop over
//! RustDDS entities (discovery and the RTPS protocol run on RustDDS's own threads).
//!
//! Each turn of the loop waits (mio) until a subscription has data, a discovery event comes,
//! or the next timer is due (at most [`MAX_WAIT`]); then it handles discovery events first (so
//! a writer of the wrong type is known before its first sample), takes samples round-robin,
//! latched subscriptions (the e-stop) first, [`BATCH`] per subscription and pass, at most
//! [`PASSES`] passes (a flooded topic cannot starve the e-stop or the timers), fires the due
//! timers and logs what the engine reported.
//! Samples of this process's own writers are skipped: the engine delivered them already.

pub mod raw;
pub mod transport;

pub use transport::DdsTransport;

use crate::engine::Engine;
use crate::error::DdsError;
use ros2_client::dds::rustdds::mio1::{Events, Interest, Poll, Token};
use ros2_client::dds::rustdds::{DomainParticipantStatusEvent as Ev, StatusEvented};
use std::sync::atomic::{AtomicBool, Ordering};
use std::time::{Duration, Instant, SystemTime, UNIX_EPOCH};

/// Longest sleep of the loop.
pub const MAX_WAIT: Duration = Duration::from_millis(100);
/// Samples taken from one subscription per pass.
pub const BATCH: usize = 32;
/// Passes over the subscriptions per turn of the loop.
pub const PASSES: usize = 8;
/// How long the stop commands get to leave before the transport closes.
pub const STOP_LINGER: Duration = Duration::from_millis(200);

/// System time [ns since the Unix epoch].
fn system_ns() -> i64 {
    SystemTime::now().duration_since(UNIX_EPOCH).map(|d| d.as_nanos() as i64).unwrap_or(0)
}

fn io_error(what: &str) -> impl FnOnce(std::io::Error) -> DdsError + '_ {
    move |e| DdsError::Transport { what: what.to_string(), reason: e.to_string() }
}

fn handle_event(ev: Ev, t: &DdsTransport, engine: &mut Engine) {
    use transport::endpoint_id;
    match ev {
        Ev::WriterDetected { writer } if !t.is_own(&writer.guid) => {
            engine.on_remote_writer(&writer.topic_name, &writer.type_name, endpoint_id(&writer.guid));
        }
        Ev::ReaderDetected { reader } if !t.is_own(&reader.guid) => {
            engine.on_remote_reader(&reader.topic_name, &reader.type_name, endpoint_id(&reader.guid));
        }
        Ev::WriterLost { guid, .. } | Ev::ReaderLost { guid, .. } => engine.on_remote_lost(endpoint_id(&guid)),
        Ev::RemoteReaderMatched { local_writer, remote_reader } => {
            if let Some(o) = t.output_of(&local_writer) {
                log::info!("{}: matched subscription {:032x}", engine.outputs()[o].topic, endpoint_id(&remote_reader));
            }
        }
        Ev::RemoteWriterMatched { local_reader, remote_writer } => {
            if let Some(i) = t.input_of(&local_reader) {
                log::info!("{}: matched publisher {:032x}", engine.inputs()[i].topic, endpoint_id(&remote_writer));
            }
        }
        Ev::RemoteReaderQosIncompatible { local_writer, remote_reader, .. } => {
            if let Some(o) = t.output_of(&local_writer) {
                let ep = &engine.outputs()[o];
                log::warn!("{}: subscription {:032x} asks for a QoS this publisher does not offer ({:?}): it gets nothing", ep.topic, endpoint_id(&remote_reader), ep.qos);
            }
        }
        Ev::RemoteWriterQosIncompatible { local_reader, remote_writer, .. } => {
            if let Some(i) = t.input_of(&local_reader) {
                let ep = &engine.inputs()[i];
                log::warn!("{}: publisher {:032x} offers less than this subscription needs ({:?}): its samples are not received", ep.topic, endpoint_id(&remote_writer), ep.qos);
            }
        }
        _ => {}
    }
}

/// Takes samples round-robin in `order`; returns whether some subscription may still have
/// data.
fn take_inputs(t: &mut DdsTransport, engine: &mut Engine, order: &[usize], start: Instant) -> bool {
    t.drain_notifications();
    for _ in 0..PASSES {
        let mut more = false;
        for &i in order {
            let mut taken = 0;
            while taken < BATCH {
                let (writer, raw) = match t.take(i) {
                    Ok(Some(s)) => s,
                    Ok(None) => break,
                    Err(e) => {
                        log::warn!("{}: the middleware could not read a sample: {e}", engine.inputs()[i].topic);
                        break;
                    }
                };
                taken += 1;
                if !t.is_own(&writer) {
                    let steady = start.elapsed().as_nanos() as i64;
                    engine.on_sample(system_ns(), steady, i, transport::endpoint_id(&writer), &raw.0, t);
                }
            }
            more |= taken == BATCH;
        }
        if !more {
            return false;
        }
        engine.poll_timers(system_ns(), t);
    }
    true
}

/// Runs `engine` on DDS domain `domain_id` until `stop` is set (e.g. by a signal handler).
pub fn run(engine: &mut Engine, domain_id: u16, namespace: &str, stop: &AtomicBool) -> Result<(), DdsError> {
    let mut t = DdsTransport::open(engine, domain_id, namespace)?;
    let mut status = t.participant().status_listener();
    let mut poll = Poll::new().map_err(io_error("create the poller"))?;
    let n = engine.inputs().len();
    for (i, r) in t.readers_mut().iter_mut().enumerate() {
        poll.registry().register(r, Token(i), Interest::READABLE).map_err(io_error("register a subscription"))?;
    }
    poll.registry()
        .register(status.as_status_source_mio1(), Token(n), Interest::READABLE)
        .map_err(io_error("register discovery events"))?;
    for ep in engine.inputs() {
        log::info!("subscribe {} ({}) as {} [{}] {:?}", ep.topic, ep.type_name, ep.dds_topic, ep.dds_type, ep.qos);
    }
    for ep in engine.outputs() {
        log::info!("publish {} ({}) as {} [{}] {:?}", ep.topic, ep.type_name, ep.dds_topic, ep.dds_type, ep.qos);
    }
    log::info!(
        "running {} on DDS domain {domain_id}, {:?} clock, participant {:032x}",
        engine.node_names().join(", "),
        engine.clock_mode(),
        transport::endpoint_id(&ros2_client::dds::rustdds::RTPSEntity::guid(t.participant()))
    );
    // Priority inputs (the e-stop, latched state) first in every pass: a stop must not wait
    // behind a flood.
    let mut order: Vec<usize> = (0..n).collect();
    order.sort_by_key(|&i| !engine.inputs()[i].class.is_some_and(sillage_core::Qos::is_priority));
    let start = Instant::now();
    let mut events = Events::with_capacity(64);
    let mut pending = false;
    while !stop.load(Ordering::Relaxed) {
        let wait = if pending {
            Duration::ZERO
        } else {
            engine.wait_hint(system_ns()).map(|ns| Duration::from_nanos(ns.max(0) as u64)).unwrap_or(MAX_WAIT).min(MAX_WAIT)
        };
        if let Err(e) = poll.poll(&mut events, Some(wait)) {
            if e.kind() != std::io::ErrorKind::Interrupted {
                return Err(io_error("wait for input")(e));
            }
        }
        while let Some(ev) = status.try_recv_status() {
            handle_event(ev, &t, engine);
        }
        pending = take_inputs(&mut t, engine, &order, start);
        engine.poll_timers(system_ns(), &mut t);
        for line in engine.drain_log() {
            log::warn!("{line}");
        }
    }
    engine.stop(system_ns(), &mut t);
    for line in engine.drain_log() {
        log::warn!("{line}");
    }
    // The middleware sends on its own thread: give the zero commands time to leave before the
    // participant goes away (`ros2-client` publishers cannot wait for acknowledgements).
    std::thread::sleep(STOP_LINGER);
    log::info!("stopped (zero velocity published on velocity outputs)");
    Ok(())
}
