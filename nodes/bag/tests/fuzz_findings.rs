//! Regression tests for inputs the fuzz targets found (tests/fuzz/findings/). This test binary
//! counts allocations: the largest single request must stay small.

use sillage_bag::mcap_read::McapSource;
use sillage_bag::Source;
use std::alloc::{GlobalAlloc, Layout, System};
use std::path::{Path, PathBuf};
use std::sync::atomic::{AtomicUsize, Ordering};

/// The system allocator, remembering the largest request.
struct Largest;

static LARGEST: AtomicUsize = AtomicUsize::new(0);

unsafe impl GlobalAlloc for Largest {
    unsafe fn alloc(&self, layout: Layout) -> *mut u8 {
        LARGEST.fetch_max(layout.size(), Ordering::Relaxed);
        unsafe { System.alloc(layout) }
    }
    unsafe fn dealloc(&self, ptr: *mut u8, layout: Layout) {
        unsafe { System.dealloc(ptr, layout) }
    }
    unsafe fn realloc(&self, ptr: *mut u8, layout: Layout, new_size: usize) -> *mut u8 {
        LARGEST.fetch_max(new_size, Ordering::Relaxed);
        unsafe { System.realloc(ptr, layout, new_size) }
    }
}

#[global_allocator]
static GLOBAL: Largest = Largest;

fn finding(name: &str) -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("../../tests/fuzz/findings").join(name)
}

#[test]
fn a_summary_string_length_of_4_gib_falls_back_to_a_linear_read_without_a_huge_allocation() {
    // A 13 409-byte file whose summary ChunkIndex record (byte 12954) has its compression
    // string length (byte 13167) set to 0xffffffff.
    let path = finding("mcap_reader-oom-chunk-index-string-length.mcap");
    let data = std::fs::read(&path).expect("finding");
    LARGEST.store(0, Ordering::Relaxed);
    let mut src = McapSource::new(Path::new("finding.mcap"), std::io::Cursor::new(data.clone()), 0, i64::MAX).expect("opens");
    let largest = LARGEST.load(Ordering::Relaxed);
    assert!(largest < 64 << 20, "opening asked for {largest} bytes at once");
    assert!(src.summary().is_none(), "the corrupt summary must not be used");
    let warnings = src.take_warnings();
    assert!(
        warnings.iter().any(|w| w.contains("finding.mcap") && w.contains("byte 12954") && w.contains("length 4294967295 at byte 13167")),
        "{warnings:?}"
    );
    // Front to back: messages, then the end or a typed error; never a panic.
    let mut n = 0;
    loop {
        match src.advance() {
            Ok(true) => n += 1,
            Ok(false) => break,
            Err(e) => {
                assert!(e.to_string().contains("finding.mcap"), "{e}");
                break;
            }
        }
    }
    let largest = LARGEST.load(Ordering::Relaxed);
    assert!(largest < 64 << 20, "largest allocation {largest} bytes ({n} messages read)");
    // The fuzz target's entry point agrees.
    let d = sillage_bag::fuzzing::drain_mcap(&data, 1 << 20);
    assert!(LARGEST.load(Ordering::Relaxed) < 64 << 20);
    assert_eq!(d.messages, n);
}
