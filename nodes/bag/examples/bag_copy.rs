//! Reads bags and writes every message of a known type into a new MCAP bag folder with
//! sillage's writer (used by tests/refs/bag_roundtrip.py to check what sillage writes):
//!
//!     cargo run -p sillage-bag --example bag_copy -- OUT_DIR BAG...

use sillage_bag::{Bag, BagWriter, QosProfile, ReadOptions, WriterOptions};

fn main() -> Result<(), Box<dyn std::error::Error>> {
    let mut args = std::env::args().skip(1);
    let out = args.next().ok_or("usage: bag_copy OUT_DIR BAG...")?;
    let bags: Vec<String> = args.collect();
    let bag = Bag::open_many(&bags)?;
    let mut w = BagWriter::create(&out, WriterOptions { overwrite: true, ..Default::default() })?;
    let qos = [QosProfile::from(sillage_core::Qos::Reliable)];
    for m in bag.messages(&ReadOptions::default())? {
        let m = m?;
        w.write_on(&m.topic, m.log_time, &m.msg, &qos)?;
    }
    let s = w.finish()?;
    eprintln!("{}: {} messages", s.file.display(), s.metadata.message_count);
    Ok(())
}
