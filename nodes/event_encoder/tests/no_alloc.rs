//! The per-sample path allocates nothing after warm-up: counted with a global allocator that
//! tallies allocations of the current thread.

use sillage_core::msg::{ChemSample, Header, Time};
use sillage_core::{Msg, NodeCore, Outbox};
use sillage_event_encoder::conditioning::ConditioningParams;
use sillage_event_encoder::encoding::EncodingParams;
use sillage_event_encoder::{Channel, EventEncoder, Params};
use std::alloc::{GlobalAlloc, Layout, System};
use std::cell::Cell;

struct Counting;

thread_local! {
    static ALLOCS: Cell<u64> = const { Cell::new(0) };
}

unsafe impl GlobalAlloc for Counting {
    unsafe fn alloc(&self, layout: Layout) -> *mut u8 {
        ALLOCS.with(|c| c.set(c.get() + 1));
        unsafe { System.alloc(layout) }
    }
    unsafe fn dealloc(&self, ptr: *mut u8, layout: Layout) {
        unsafe { System.dealloc(ptr, layout) }
    }
    unsafe fn realloc(&self, ptr: *mut u8, layout: Layout, new_size: usize) -> *mut u8 {
        ALLOCS.with(|c| c.set(c.get() + 1));
        unsafe { System.realloc(ptr, layout, new_size) }
    }
}

#[global_allocator]
static GLOBAL: Counting = Counting;

fn allocs() -> u64 {
    ALLOCS.with(|c| c.get())
}

fn mox(k: i64) -> f64 {
    let s = k as f64 * 0.01;
    8_000.0 + 2_000.0 * (0.7 * s).sin() + 150.0 * (13.0 * s).sin()
}

#[test]
fn channel_step_allocates_nothing_after_warm_up() {
    let mut ch = Channel::new(&ConditioningParams::default(), &EncodingParams::default(), 1.0);
    ch.set_quantity(ChemSample::RESISTANCE);
    let mut out = Vec::new();
    let mut events = 0;
    for k in 0..1_000 {
        out.clear();
        events += ch.step(k * 10_000_000, mox(k), &mut out).expect("valid");
    }
    let before = allocs();
    for k in 1_000..20_000 {
        out.clear();
        events += ch.step(k * 10_000_000, mox(k), &mut out).expect("valid");
    }
    assert_eq!(allocs() - before, 0, "allocations in 19000 steps");
    assert!(events > 100, "the signal must produce events for the test to mean something: {events}");
}

#[test]
fn node_samples_without_events_allocate_nothing() {
    let mut p = Params::default();
    p.encoding.delta = 10.0; // no event from this signal: no message to allocate
    p.heartbeat = 0.0; // heartbeat arrays are messages too
    let mut e = EventEncoder::new(p).expect("valid");
    let mut out = Outbox::new();
    let mut msg = Msg::ChemSample(ChemSample {
        header: Header::new(0, "board"),
        channels: vec!["left".into(), "right".into()],
        values: vec![0.0; 2],
        quantity: ChemSample::RESISTANCE,
    });
    let mut step = |k: i64, e: &mut EventEncoder, out: &mut Outbox| {
        if let Msg::ChemSample(s) = &mut msg {
            s.header.stamp = Time::from_nanos(k * 10_000_000);
            s.values[0] = mox(k);
            s.values[1] = mox(k + 50);
        }
        e.on_message(k * 10_000_000, 0, &msg, out);
        out.drain().for_each(drop);
    };
    for k in 0..100 {
        step(k, &mut e, &mut out);
    }
    let before = allocs();
    for k in 100..10_000 {
        step(k, &mut e, &mut out);
    }
    assert_eq!(allocs() - before, 0);
    assert_eq!(e.counts().accepted, 10_000);
}
