//! CDR encode/decode throughput of the hot message types.
use criterion::{criterion_group, criterion_main, Criterion};
use sillage_core::msg::*;
use sillage_core::Msg;
use std::hint::black_box;

fn chem() -> Msg {
    ChemSample {
        header: Header::new(1_700_000_000_000_000_000, "chem_board"),
        channels: vec!["left".into(), "right".into()],
        values: vec![12_345.0, 11_800.5],
        quantity: ChemSample::RESISTANCE,
    }
    .into()
}

fn bench(c: &mut Criterion) {
    let m = chem();
    let bytes = m.encode().expect("encodes");
    let mut buf = Vec::new();
    c.bench_function("cdr_encode_chem_sample", |b| b.iter(|| m.encode_into(black_box(&mut buf))));
    c.bench_function("cdr_decode_chem_sample", |b| {
        b.iter(|| Msg::decode("sillage_msgs/msg/ChemSample", black_box(&bytes)))
    });
    let odom: Msg = Odometry::default().into();
    let ob = odom.encode().expect("encodes");
    c.bench_function("cdr_decode_odometry", |b| b.iter(|| Msg::decode("nav_msgs/msg/Odometry", black_box(&ob))));
    c.bench_function("cdr_encode_odometry", |b| b.iter(|| odom.encode_into(black_box(&mut buf))));
    // The generic serde path, which Msg bypasses for Odometry (same bytes).
    let Msg::Odometry(plain) = &odom else { return };
    c.bench_function("cdr_decode_odometry_generic", |b| b.iter(|| sillage_core::cdr::decode::<Odometry>(black_box(&ob))));
    c.bench_function("cdr_encode_odometry_generic", |b| b.iter(|| sillage_core::cdr::encode_into::<Odometry>(plain, black_box(&mut buf))));
}

criterion_group!(benches, bench);
criterion_main!(benches);
