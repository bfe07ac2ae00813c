//! The MCAP side of [`crate::BagWriter`]: schema, channel and message records handed to the
//! mcap crate's writer in batches, either at once on the caller's thread or on a thread of its
//! own (which then does the MCAP framing, chunk compression and CRCs while the caller goes on).
//! Either way the mcap writer sees the same calls in the same order, so the file's bytes do not
//! depend on where it runs.

use crate::error::BagError;
use std::collections::BTreeMap;
use std::fs::File;
use std::io::BufWriter;
use std::path::{Path, PathBuf};
use std::sync::mpsc::{sync_channel, Receiver, SyncSender};
use std::thread::JoinHandle;

/// The mcap crate's writer on a buffered file.
pub(crate) type Mcap = mcap::Writer<BufWriter<File>>;

/// One record to write, in order.
#[derive(Debug)]
enum Op {
    Schema { name: &'static str, text: String },
    Channel { schema: usize, topic: String, meta: BTreeMap<String, String> },
    /// A message whose CDR bytes are the next `len` bytes of the batch's data.
    Message { channel: usize, sequence: u32, time: u64, len: usize },
}

/// Records in order, with the message bytes back to back.
#[derive(Debug, Default)]
pub(crate) struct Batch {
    ops: Vec<Op>,
    data: Vec<u8>,
}

/// A batch is handed to the writer thread at this many bytes of messages ...
const BATCH_BYTES: usize = 256 * 1024;
/// ... or this many records, whichever comes first.
const BATCH_OPS: usize = 4096;
/// Batches in flight to the writer thread (bounds memory; the caller waits beyond it).
const IN_FLIGHT: usize = 2;

impl Batch {
    /// The buffer to append the next message's CDR bytes to (see [`Batch::message`]).
    pub(crate) fn data(&mut self) -> &mut Vec<u8> {
        &mut self.data
    }

    /// Records a message of the last `len` bytes appended to [`Batch::data`].
    pub(crate) fn message(&mut self, channel: usize, sequence: u32, time: u64, len: usize) {
        self.ops.push(Op::Message { channel, sequence, time, len });
    }

    pub(crate) fn schema(&mut self, name: &'static str, text: String) {
        self.ops.push(Op::Schema { name, text });
    }

    pub(crate) fn channel(&mut self, schema: usize, topic: &str, meta: BTreeMap<String, String>) {
        self.ops.push(Op::Channel { schema, topic: topic.to_string(), meta });
    }

    fn is_full(&self) -> bool {
        self.data.len() >= BATCH_BYTES || self.ops.len() >= BATCH_OPS
    }

    fn clear(&mut self) {
        self.ops.clear();
        self.data.clear();
    }
}

/// The mcap writer with the ids it gave to our schema and channel indices.
struct McapOut {
    path: PathBuf,
    writer: Mcap,
    schemas: Vec<u16>,
    channels: Vec<u16>,
}

impl McapOut {
    fn err(&self, e: impl std::fmt::Display) -> BagError {
        BagError::Write { path: self.path.clone(), reason: e.to_string() }
    }

    fn apply(&mut self, b: &Batch) -> Result<(), BagError> {
        let mut at = 0usize;
        for op in &b.ops {
            match op {
                Op::Schema { name, text } => {
                    let id = self.writer.add_schema(name, "ros2msg", text.as_bytes()).map_err(|e| self.err(e))?;
                    self.schemas.push(id);
                }
                Op::Channel { schema, topic, meta } => {
                    let s = *self.schemas.get(*schema).ok_or_else(|| self.err("unknown schema index"))?;
                    let id = self.writer.add_channel(s, topic, "cdr", meta).map_err(|e| self.err(e))?;
                    self.channels.push(id);
                }
                Op::Message { channel, sequence, time, len } => {
                    let channel_id = *self.channels.get(*channel).ok_or_else(|| self.err("unknown channel index"))?;
                    let data = b.data.get(at..at + len).ok_or_else(|| self.err("message bytes missing from the batch"))?;
                    at += len;
                    let header = mcap::records::MessageHeader { channel_id, sequence: *sequence, log_time: *time, publish_time: *time };
                    self.writer.write_to_known_channel(&header, data).map_err(|e| self.err(e))?;
                }
            }
        }
        Ok(())
    }

    fn finish(mut self, metadata: mcap::records::Metadata) -> Result<(), BagError> {
        self.writer.write_metadata(&metadata).map_err(|e| self.err(e))?;
        self.writer.finish().map_err(|e| self.err(e))?;
        let mut out = self.writer.into_inner();
        std::io::Write::flush(&mut out).map_err(|e| BagError::io(&self.path, e))
    }
}

enum Cmd {
    Batch(Batch),
    Finish(mcap::records::Metadata),
}

/// Where batches go.
enum Mode {
    Inline(Box<McapOut>),
    Thread { tx: SyncSender<Cmd>, spare: Receiver<Batch>, worker: JoinHandle<Result<(), BagError>> },
}

/// The MCAP side: the batch being filled and where it goes.
pub(crate) struct Backend {
    path: PathBuf,
    batch: Batch,
    mode: Option<Mode>,
}

impl Backend {
    /// Writes through `writer` on the caller's thread, or on a thread of its own when
    /// `background`.
    pub(crate) fn new(path: &Path, writer: Mcap, background: bool) -> Result<Backend, BagError> {
        let out = McapOut { path: path.to_path_buf(), writer, schemas: Vec::new(), channels: Vec::new() };
        let mode = if background { Backend::spawn(out)? } else { Mode::Inline(Box::new(out)) };
        Ok(Backend { path: path.to_path_buf(), batch: Batch::default(), mode: Some(mode) })
    }

    /// Moves `out` to a writer thread of its own.
    fn spawn(out: McapOut) -> Result<Mode, BagError> {
        let path = out.path.clone();
        let (tx, rx) = sync_channel::<Cmd>(IN_FLIGHT);
        let (spare_tx, spare) = sync_channel::<Batch>(IN_FLIGHT + 1);
        let worker = std::thread::Builder::new()
            .name("bag-writer".into())
            .spawn(move || {
                let mut out = out;
                while let Ok(cmd) = rx.recv() {
                    match cmd {
                        Cmd::Batch(mut b) => {
                            out.apply(&b)?;
                            b.clear();
                            let _ = spare_tx.try_send(b);
                        }
                        Cmd::Finish(m) => return out.finish(m),
                    }
                }
                Err(out.err("the bag writer was dropped before it finished"))
            })
            .map_err(|e| BagError::Write { path, reason: format!("cannot start the writer thread: {e}") })?;
        Ok(Mode::Thread { tx, spare, worker })
    }

    fn gone(&self) -> BagError {
        BagError::Write { path: self.path.clone(), reason: "writer already finished".into() }
    }

    /// The batch to add records to; call [`Backend::commit`] after each record.
    pub(crate) fn batch(&mut self) -> &mut Batch {
        &mut self.batch
    }

    /// Hands the batch on: at once when inline, when full when threaded.
    pub(crate) fn commit(&mut self) -> Result<(), BagError> {
        match self.mode.as_mut() {
            Some(Mode::Inline(out)) => {
                let r = out.apply(&self.batch);
                self.batch.clear();
                r
            }
            Some(Mode::Thread { .. }) if !self.batch.is_full() => Ok(()),
            Some(Mode::Thread { .. }) => self.send(),
            None => Err(self.gone()),
        }
    }

    /// Sends the batch to the writer thread; when the thread has stopped, its error.
    fn send(&mut self) -> Result<(), BagError> {
        let Some(Mode::Thread { tx, spare, .. }) = self.mode.as_mut() else { return Ok(()) };
        let next = spare.try_recv().unwrap_or_default();
        let full = std::mem::replace(&mut self.batch, next);
        if tx.send(Cmd::Batch(full)).is_ok() {
            return Ok(());
        }
        // The thread stopped on an error: collect it.
        match self.mode.take() {
            Some(Mode::Thread { worker, .. }) => Err(joined(&self.path, worker)),
            _ => Err(self.gone()),
        }
    }

    /// Writes what is left, then the metadata record and the summary, and closes the file.
    pub(crate) fn finish(&mut self, metadata: mcap::records::Metadata) -> Result<(), BagError> {
        match self.mode.take() {
            Some(Mode::Inline(out)) => out.finish(metadata),
            Some(Mode::Thread { tx, worker, .. }) => {
                let batch = std::mem::take(&mut self.batch);
                let sent = tx.send(Cmd::Batch(batch)).is_ok() && tx.send(Cmd::Finish(metadata)).is_ok();
                drop(tx);
                match worker.join() {
                    Ok(r) => r,
                    Err(_) => Err(BagError::Write { path: self.path.clone(), reason: "the bag writer thread panicked".into() }),
                }
                .and_then(|()| if sent { Ok(()) } else { Err(self.gone()) })
            }
            None => Err(self.gone()),
        }
    }

    /// Whether [`Backend::finish`] has not run yet.
    pub(crate) fn is_open(&self) -> bool {
        self.mode.is_some()
    }
}

/// The error a stopped writer thread returned.
fn joined(path: &Path, worker: JoinHandle<Result<(), BagError>>) -> BagError {
    match worker.join() {
        Ok(Err(e)) => e,
        Ok(Ok(())) => BagError::Write { path: path.to_path_buf(), reason: "the bag writer thread stopped early".into() },
        Err(_) => BagError::Write { path: path.to_path_buf(), reason: "the bag writer thread panicked".into() },
    }
}
