//! MCAP storage files (rosbag2 profile `ros2`): a cursor in log-time order.
//!
//! With a summary (every finished rosbag2 MCAP file has one), the mcap crate's summary reader
//! gives the channels, schemas and chunk indexes; chunks are then read one at a time in order
//! of their first log time, each checked against its CRC, and overlapping chunks are merged, so
//! memory holds only the chunks that overlap the current time. Without a summary (a recording
//! that was cut off) or without chunk indexes (unchunked files), the mcap crate's streaming
//! message reader reads the file front to back; a cut-off end is then a warning, not an error.

use crate::error::{BagError, Damage, DamageKind, Location};
use crate::mcap_check::{check_record, check_records};
use crate::source::{Head, Source, TopicDecl};
use mcap::records::{op, ChunkIndex};
use mcap::sans_io::{LinearReadEvent, LinearReader, LinearReaderOptions, SummaryReadEvent, SummaryReader, SummaryReaderOptions};
use std::collections::HashMap;
use std::io::{Read, Seek, SeekFrom};
use std::path::{Path, PathBuf};
use std::sync::mpsc::{sync_channel, Receiver, SyncSender};

/// Largest decompressed chunk accepted [bytes]; a corrupt size field must not allocate more.
pub const MAX_CHUNK_BYTES: u64 = 1 << 30;

/// One message record inside a decompressed chunk.
#[derive(Debug, Clone, Copy)]
struct Entry {
    log_time: u64,
    channel: u16,
    /// Data range in the chunk buffer.
    start: u32,
    end: u32,
    /// Offset of the record in the decompressed chunk.
    record: u32,
    /// CRC-32 of the data (for duplicate detection), computed where the chunk is decoded.
    crc: u32,
}

/// Channels declared inside a chunk, by id.
type Learnt = Vec<(u16, TopicDecl)>;

/// A decompressed chunk and its messages in log-time order.
struct LoadedChunk {
    offset: u64,
    buf: Vec<u8>,
    entries: Vec<Entry>,
    pos: usize,
    /// Channels declared inside the chunk.
    learnt: Learnt,
}

impl LoadedChunk {
    fn head_time(&self) -> Option<u64> {
        self.entries.get(self.pos).map(|e| e.log_time)
    }
}

/// Where the next chunk comes from: read here, or from the prefetch thread (which reads them
/// in the same order, at most [`PREFETCH`] ahead).
enum Feed {
    Inline { raw: Vec<u8> },
    Thread { rx: Receiver<Result<LoadedChunk, BagError>>, spare_tx: SyncSender<Vec<u8>> },
}

/// Chunks decoded ahead of the reader by the prefetch thread.
pub const PREFETCH: usize = 2;

/// Chunks in order of their first log time, and those loaded now.
struct Indexed {
    chunks: Vec<ChunkIndex>,
    next: usize,
    active: Vec<LoadedChunk>,
    spare: Vec<Vec<u8>>,
    feed: Feed,
    current: Option<usize>,
}

/// Front-to-back reading: the mcap crate's linear reader yields top-level records (chunks
/// whole), and chunks are decoded and checked here as on the indexed path.
struct Linear {
    reader: LinearReader,
    schemas: HashMap<u16, (String, String, String)>,
    /// A message outside chunks: (log time, channel, data, CRC).
    single: Option<(u64, u16, Vec<u8>, u32)>,
    chunk: Option<LoadedChunk>,
    done: bool,
}

enum Mode {
    Indexed(Indexed),
    Linear(Box<Linear>),
}

/// Reads, checks and indexes chunks of one file.
struct ChunkLoader<R> {
    path: PathBuf,
    file: R,
    file_len: u64,
    start: u64,
    end: u64,
    /// Largest chunk accepted [bytes].
    limit: u64,
}

/// The file and what is known about it.
struct FileCtx<R> {
    loader: ChunkLoader<R>,
    channels: HashMap<u16, TopicDecl>,
    warnings: Vec<String>,
    offset_read: u64,
    /// Skip damaged chunks and stop quietly at damage, recording it in `damage`.
    salvage: bool,
    damage: Vec<Damage>,
}

/// A cursor over one MCAP file.
pub struct McapSource<R: Read + Seek> {
    ctx: FileCtx<R>,
    summary: Option<mcap::Summary>,
    mode: Mode,
    /// Start the prefetch thread at the first advance (files opened by path).
    want_prefetch: bool,
}

fn mcap_err(path: &Path, at: Location, e: impl std::fmt::Display) -> BagError {
    BagError::Mcap { path: path.to_path_buf(), at, reason: e.to_string() }
}

fn decl_of(ch: &mcap::Channel<'_>) -> TopicDecl {
    let (type_name, schema_encoding, schema) = match &ch.schema {
        Some(s) => (s.name.clone(), s.encoding.clone(), String::from_utf8_lossy(&s.data).into_owned()),
        None => (String::new(), String::new(), String::new()),
    };
    TopicDecl {
        name: ch.topic.clone(),
        type_name,
        encoding: ch.message_encoding.clone(),
        schema_encoding,
        schema,
        qos: ch.metadata.get("offered_qos_profiles").cloned().unwrap_or_default(),
    }
}

/// Footer record and closing magic at the end of the file [bytes].
const FOOTER_AND_MAGIC: u64 = 1 + 8 + 20 + 8;

/// Checks the lengths inside the summary section (the footer says where it starts) before the
/// mcap crate parses it: a corrupt length there would make the crate reserve up to 4 GiB.
fn check_summary<R: Read + Seek>(file: &mut R, len: u64, limit: u64) -> Result<(), String> {
    if len < 8 + FOOTER_AND_MAGIC {
        return Ok(()); // too short for a footer: the summary reader says so
    }
    let footer_at = len - FOOTER_AND_MAGIC;
    let mut footer = [0u8; 29];
    file.seek(SeekFrom::Start(footer_at)).map_err(|e| e.to_string())?;
    file.read_exact(&mut footer).map_err(|e| e.to_string())?;
    if footer[0] != op::FOOTER {
        return Ok(()); // no footer: the summary reader reports it
    }
    let mut start8 = [0u8; 8];
    start8.copy_from_slice(&footer[9..17]);
    let start = u64::from_le_bytes(start8);
    if start == 0 {
        return Ok(()); // no summary section
    }
    if start < 8 || start > footer_at {
        return Err(format!("the footer at byte {footer_at} puts the summary at byte {start}, outside the file's {footer_at} bytes before it"));
    }
    if footer_at - start > limit {
        return Err(format!("summary section at byte {start} is {} bytes, more than the {limit}-byte limit", footer_at - start));
    }
    let mut section = vec![0u8; (footer_at - start) as usize];
    file.seek(SeekFrom::Start(start)).map_err(|e| e.to_string())?;
    file.read_exact(&mut section).map_err(|e| e.to_string())?;
    check_records(&section, start)
}

/// Reads the summary section; `Ok(None)` when the file has none or it cannot be read (the
/// reason is returned for a warning).
fn read_summary<R: Read + Seek>(file: &mut R, len: u64, limit: u64) -> Result<Option<mcap::Summary>, String> {
    check_summary(file, len, limit)?;
    let mut reader =
        SummaryReader::new_with_options(SummaryReaderOptions::default().with_file_size(len).with_record_length_limit(limit as usize));
    while let Some(event) = reader.next_event() {
        match event.map_err(|e| e.to_string())? {
            SummaryReadEvent::ReadRequest(n) => {
                let read = file.read(reader.insert(n)).map_err(|e| e.to_string())?;
                reader.notify_read(read);
            }
            SummaryReadEvent::SeekRequest(to) => {
                let pos = file.seek(to).map_err(|e| e.to_string())?;
                reader.notify_seeked(pos);
            }
        }
    }
    Ok(reader.finish())
}

impl McapSource<std::io::BufReader<std::fs::File>> {
    /// Opens an MCAP file for messages with log times in `[start, end]` [ns]; chunks are then
    /// decoded ahead on a thread of their own from the first [`Source::advance`] on.
    pub fn open(path: &Path, start: i64, end: i64) -> Result<Self, BagError> {
        let f = std::fs::File::open(path).map_err(|e| BagError::io(path, e))?;
        let mut s = McapSource::new(path, std::io::BufReader::with_capacity(1 << 16, f), start, end)?;
        s.want_prefetch = true;
        Ok(s)
    }
}

impl<R: Read + Seek> McapSource<R> {
    /// Moves chunk reading to a thread of its own with a second handle on the file: it reads,
    /// decompresses, checks and indexes the chunks in order, at most [`PREFETCH`] ahead.
    fn prefetch(&mut self) -> Result<(), BagError> {
        let Mode::Indexed(ix) = &mut self.mode else { return Ok(()) };
        if ix.chunks.len() < 2 {
            return Ok(());
        }
        let l = &self.ctx.loader;
        let f = std::fs::File::open(&l.path).map_err(|e| BagError::io(&l.path, e))?;
        let mut loader = ChunkLoader { path: l.path.clone(), file: std::io::BufReader::with_capacity(1 << 16, f), file_len: l.file_len, start: l.start, end: l.end, limit: l.limit };
        let chunks = ix.chunks.clone();
        let (tx, rx) = sync_channel(PREFETCH);
        let (spare_tx, spare_rx) = sync_channel::<Vec<u8>>(PREFETCH + 2);
        let reader = std::thread::Builder::new().name("mcap-prefetch".into()).spawn(move || {
            let mut raw = Vec::new();
            for ci in &chunks {
                let buf = spare_rx.try_recv().unwrap_or_default();
                let r = loader.load(ci, &mut raw, buf);
                // A failed chunk is sent too: in salvage mode the reader skips it and goes on.
                if tx.send(r).is_err() {
                    return;
                }
            }
        });
        // Without a thread, chunks are read inline as before.
        if reader.is_ok() {
            ix.feed = Feed::Thread { rx, spare_tx };
        }
        Ok(())
    }

    /// A cursor over MCAP bytes from `file`; `path` labels errors.
    pub fn new(path: &Path, file: R, start: i64, end: i64) -> Result<Self, BagError> {
        McapSource::with_limit(path, file, start, end, MAX_CHUNK_BYTES)
    }

    /// As [`McapSource::new`], refusing records and chunks larger than `limit` bytes.
    pub fn with_limit(path: &Path, mut file: R, start: i64, end: i64, limit: u64) -> Result<Self, BagError> {
        let path = path.to_path_buf();
        let io = |e| BagError::io(&path, e);
        let file_len = file.seek(SeekFrom::End(0)).map_err(io)?;
        file.seek(SeekFrom::Start(0)).map_err(io)?;
        let mut magic = [0u8; 8];
        if file_len < 8 || file.read_exact(&mut magic).is_err() || magic != *mcap::MAGIC {
            return Err(mcap_err(&path, Location::Offset(0), "bad magic (not an MCAP file)"));
        }
        let mut warnings = Vec::new();
        let summary = match read_summary(&mut file, file_len, limit) {
            Ok(s) => s,
            Err(reason) => {
                warnings.push(format!("{}: no usable summary ({reason}); reading the file front to back", path.display()));
                None
            }
        };
        let mut channels = HashMap::new();
        let (start, end) = (start.max(0) as u64, end.max(0) as u64);
        let mode = match &summary {
            Some(s) if !s.chunk_indexes.is_empty() => {
                for (id, ch) in &s.channels {
                    channels.insert(*id, decl_of(ch));
                }
                let mut chunks: Vec<ChunkIndex> = s
                    .chunk_indexes
                    .iter()
                    .filter(|c| c.message_end_time >= start && c.message_start_time <= end)
                    .cloned()
                    .collect();
                chunks.sort_by_key(|c| (c.message_start_time, c.chunk_start_offset));
                Mode::Indexed(Indexed { chunks, next: 0, active: Vec::new(), spare: Vec::new(), feed: Feed::Inline { raw: Vec::new() }, current: None })
            }
            _ => {
                file.seek(SeekFrom::Start(0)).map_err(io)?;
                let opts = LinearReaderOptions::default().with_record_length_limit(limit as usize).with_emit_chunks(true);
                Mode::Linear(Box::new(Linear { reader: LinearReader::new_with_options(opts), schemas: HashMap::new(), single: None, chunk: None, done: false }))
            }
        };
        let loader = ChunkLoader { path, file, file_len, start, end, limit };
        let ctx = FileCtx { loader, channels, warnings, offset_read: 0, salvage: false, damage: Vec::new() };
        Ok(McapSource { ctx, summary, mode, want_prefetch: false })
    }

    /// In salvage mode a damaged chunk is skipped and damage that ends the file's readable part
    /// ends the read; both are recorded ([`Source::take_damage`]) instead of being errors.
    pub fn set_salvage(&mut self, on: bool) {
        self.ctx.salvage = on;
    }

    /// The summary section, when the file has one.
    pub fn summary(&self) -> Option<&mcap::Summary> {
        self.summary.as_ref()
    }

    /// The topics the file declared so far, by channel id.
    pub fn channels(&self) -> &HashMap<u16, TopicDecl> {
        &self.ctx.channels
    }
}

impl<R: Read + Seek> ChunkLoader<R> {
    /// Reads, checks and indexes the chunk `ci` into `buf` (a recycled buffer).
    fn load(&mut self, ci: &ChunkIndex, raw: &mut Vec<u8>, buf: Vec<u8>) -> Result<LoadedChunk, BagError> {
        let path = &self.path;
        let at = Location::Chunk(ci.chunk_start_offset);
        let bad = |reason: String| mcap_err(path, at.clone(), reason);
        let end = ci.chunk_start_offset.checked_add(ci.chunk_length).filter(|&e| e <= self.file_len);
        if end.is_none() || ci.chunk_length < 9 || ci.chunk_length > self.limit {
            return Err(bad(format!("chunk index points outside the file (length {})", ci.chunk_length)));
        }
        raw.resize(ci.chunk_length as usize, 0);
        self.file.seek(SeekFrom::Start(ci.chunk_start_offset)).map_err(|e| BagError::io(path, e))?;
        self.file.read_exact(raw).map_err(|e| bad(format!("chunk cut off: {e}")))?;
        if raw[0] != op::CHUNK {
            return Err(bad(format!("chunk index points at a record of opcode {:#04x}, not a chunk", raw[0])));
        }
        self.decode_chunk(&raw[9..], ci.chunk_start_offset, buf)
    }

    /// Decompresses, checks and indexes a chunk record's body found at file offset `offset`.
    fn decode_chunk(&self, body: &[u8], offset: u64, mut buf: Vec<u8>) -> Result<LoadedChunk, BagError> {
        let path = &self.path;
        let at = Location::Chunk(offset);
        let bad = |reason: String| mcap_err(path, at.clone(), reason);
        check_record(op::CHUNK, body, offset + 9).map_err(&bad)?;
        let (header, data) = match mcap::read::parse_record(op::CHUNK, body) {
            Ok(mcap::records::Record::Chunk { header, data }) => (header, data),
            Ok(_) => return Err(bad("not a chunk record".into())),
            Err(e) => return Err(bad(e.to_string())),
        };
        if header.uncompressed_size > self.limit {
            return Err(bad(format!("uncompressed size {} is larger than the {}-byte limit", header.uncompressed_size, self.limit)));
        }
        let size = header.uncompressed_size as usize;
        buf.clear();
        match header.compression.as_str() {
            "" => buf.extend_from_slice(&data),
            "zstd" => {
                buf.reserve(size);
                let n = zstd::bulk::Decompressor::new()
                    .and_then(|mut d| d.decompress_to_buffer(&data, &mut buf))
                    .map_err(|e| bad(format!("zstd: {e}")))?;
                buf.truncate(n);
            }
            "lz4" => {
                let mut dec = lz4::Decoder::new(&data[..]).map_err(|e| bad(format!("lz4: {e}")))?;
                (&mut dec).take(size as u64 + 1).read_to_end(&mut buf).map_err(|e| bad(format!("lz4: {e}")))?;
            }
            other => return Err(BagError::Compression { path: path.clone(), offset, compression: other.to_string() }),
        }
        if buf.len() != size {
            return Err(bad(format!("chunk decompresses to {} bytes, its header says {size}", buf.len())));
        }
        if header.uncompressed_crc != 0 {
            let computed = crc32fast::hash(&buf);
            if computed != header.uncompressed_crc {
                return Err(BagError::ChunkCrc { path: path.clone(), offset, saved: header.uncompressed_crc, computed });
            }
        }
        let (entries, learnt) = self.index_chunk(&buf, offset)?;
        Ok(LoadedChunk { offset, buf, entries, pos: 0, learnt })
    }

    /// The message records of a decompressed chunk within the time range, in log-time order
    /// (file order for equal times), and the channels declared inside.
    fn index_chunk(&self, buf: &[u8], chunk: u64) -> Result<(Vec<Entry>, Learnt), BagError> {
        let mut entries = Vec::new();
        let mut learnt = Vec::new();
        let mut pos = 0usize;
        let mut schemas: HashMap<u16, (String, String, String)> = HashMap::new();
        while pos < buf.len() {
            let at = Location::InChunk { chunk, record: pos as u64 };
            let bad = |reason: &str| mcap_err(&self.path, at.clone(), reason);
            if buf.len() - pos < 9 {
                return Err(bad("record header cut off at the end of the chunk"));
            }
            let opcode = buf[pos];
            let mut len8 = [0u8; 8];
            len8.copy_from_slice(&buf[pos + 1..pos + 9]);
            let len = u64::from_le_bytes(len8);
            let body_start = pos + 9;
            if len > (buf.len() - body_start) as u64 {
                return Err(bad(&format!("record of {len} bytes runs past the end of the chunk")));
            }
            let body = &buf[body_start..body_start + len as usize];
            if opcode == op::SCHEMA || opcode == op::CHANNEL {
                check_record(opcode, body, body_start as u64).map_err(|r| bad(&r))?;
            }
            match opcode {
                op::MESSAGE => {
                    if body.len() < 22 {
                        return Err(bad("message record shorter than its 22-byte header"));
                    }
                    let channel = u16::from_le_bytes([body[0], body[1]]);
                    let mut t = [0u8; 8];
                    t.copy_from_slice(&body[6..14]);
                    let log_time = u64::from_le_bytes(t);
                    if log_time >= self.start && log_time <= self.end {
                        entries.push(Entry {
                            log_time,
                            channel,
                            start: (body_start + 22) as u32,
                            end: (body_start + body.len()) as u32,
                            record: pos as u32,
                            crc: crc32fast::hash(&body[22..]),
                        });
                    }
                }
                op::SCHEMA | op::CHANNEL => match mcap::read::parse_record(opcode, body) {
                    Ok(mcap::records::Record::Schema { header, data }) => {
                        schemas.insert(header.id, (header.name, header.encoding, String::from_utf8_lossy(&data).into_owned()));
                    }
                    Ok(mcap::records::Record::Channel(c)) => {
                        let (type_name, schema_encoding, schema) = schemas.get(&c.schema_id).cloned().unwrap_or_default();
                        let qos = c.metadata.get("offered_qos_profiles").cloned().unwrap_or_default();
                        learnt.push((c.id, TopicDecl { name: c.topic, type_name, encoding: c.message_encoding, schema_encoding, schema, qos }));
                    }
                    Ok(_) => {}
                    Err(e) => return Err(bad(&e.to_string())),
                },
                _ => {}
            }
            pos = body_start + len as usize;
        }
        if !entries.windows(2).all(|w| w[0].log_time <= w[1].log_time) {
            entries.sort_by_key(|e| e.log_time); // stable: equal times keep file order
        }
        Ok((entries, learnt))
    }
}

impl<R: Read + Seek> FileCtx<R> {
    /// The next chunk in start-time order, from the thread or read here.
    fn next_chunk(&mut self, ix: &mut Indexed) -> Result<LoadedChunk, BagError> {
        let ci = ix.chunks[ix.next].clone();
        ix.next += 1;
        let c = match &mut ix.feed {
            Feed::Inline { raw } => self.loader.load(&ci, raw, ix.spare.pop().unwrap_or_default())?,
            Feed::Thread { rx, .. } => match rx.recv() {
                Ok(r) => r?,
                Err(_) => return Err(mcap_err(&self.loader.path, Location::Chunk(ci.chunk_start_offset), "chunk reader thread stopped")),
            },
        };
        for (id, d) in &c.learnt {
            self.channels.entry(*id).or_insert_with(|| d.clone());
        }
        Ok(c)
    }

    fn recycle(ix: &mut Indexed, buf: Vec<u8>) {
        match &ix.feed {
            Feed::Thread { spare_tx, .. } => {
                let _ = spare_tx.try_send(buf);
            }
            Feed::Inline { .. } => ix.spare.push(buf),
        }
    }

    fn advance_indexed(&mut self, ix: &mut Indexed) -> Result<bool, BagError> {
        if let Some(i) = ix.current.take() {
            ix.active[i].pos += 1;
            match ix.active[i].head_time() {
                // Fast path: one chunk loaded and the next one starts later.
                Some(t) if ix.active.len() == 1 && ix.chunks.get(ix.next).is_none_or(|c| c.message_start_time > t) => {
                    ix.current = Some(i);
                    return Ok(true);
                }
                Some(_) => {}
                None => {
                    let done = ix.active.swap_remove(i);
                    Self::recycle(ix, done.buf);
                }
            }
        }
        // Load every chunk that may hold a message before the earliest one loaded.
        loop {
            let min = ix.active.iter().filter_map(LoadedChunk::head_time).min();
            match ix.chunks.get(ix.next) {
                Some(ci) if min.is_none_or(|m| ci.message_start_time <= m) => {
                    let ci = ci.clone();
                    let c = match self.next_chunk(ix) {
                        Ok(c) => c,
                        Err(e) if self.salvage => {
                            let lost = self.lost_in_chunk(&ci);
                            self.damage.push(Damage { path: self.loader.path.clone(), offset: ci.chunk_start_offset, kind: DamageKind::Chunk, reason: e.to_string(), lost });
                            continue;
                        }
                        Err(e) => return Err(e),
                    };
                    if c.entries.is_empty() {
                        Self::recycle(ix, c.buf);
                    } else {
                        ix.active.push(c);
                    }
                }
                _ => break,
            }
        }
        // Smallest (log time, chunk offset): equal times keep file order.
        ix.current = ix
            .active
            .iter()
            .enumerate()
            .filter_map(|(i, c)| c.head_time().map(|t| (t, c.offset, i)))
            .min()
            .map(|(_, _, i)| i);
        Ok(ix.current.is_some())
    }

    /// Messages per topic in a chunk, from its message index records (they sit after the chunk
    /// and may have survived); empty when they cannot be read.
    fn lost_in_chunk(&mut self, ci: &ChunkIndex) -> Vec<(String, u64)> {
        let mut out = Vec::new();
        for (ch, off) in &ci.message_index_offsets {
            let mut head = [0u8; 1 + 8 + 2 + 4];
            let ok = self.loader.file.seek(SeekFrom::Start(*off)).is_ok() && self.loader.file.read_exact(&mut head).is_ok();
            if !ok || head[0] != op::MESSAGE_INDEX {
                continue;
            }
            let mut n4 = [0u8; 4];
            n4.copy_from_slice(&head[11..15]);
            // Each entry: log_time u64, offset u64 (MCAP spec, Message Index record).
            let n = u64::from(u32::from_le_bytes(n4)) / 16;
            let name = self.channels.get(ch).map_or_else(|| format!("(channel {ch})"), |d| d.name.clone());
            out.push((name, n));
        }
        out
    }

    fn advance_linear(&mut self, lin: &mut Linear) -> Result<bool, BagError> {
        lin.single = None;
        if let Some(c) = &mut lin.chunk {
            c.pos += 1;
            if c.pos < c.entries.len() {
                return Ok(true);
            }
        }
        if let Some(c) = lin.chunk.take() {
            drop(c);
        }
        if lin.done {
            return Ok(false);
        }
        loop {
            let Some(event) = lin.reader.next_event() else {
                lin.done = true;
                return Ok(false);
            };
            let at = Location::Offset(self.offset_read);
            match event {
                Ok(LinearReadEvent::ReadRequest(n)) => {
                    let buf = lin.reader.insert(n);
                    let k = self.loader.file.read(buf).map_err(|e| BagError::io(&self.loader.path, e))?;
                    self.offset_read += k as u64;
                    lin.reader.notify_read(k);
                }
                Ok(LinearReadEvent::Record { opcode, data }) => match opcode {
                    op::MESSAGE => {
                        if data.len() < 22 {
                            return Err(mcap_err(&self.loader.path, at, "message record shorter than its 22-byte header"));
                        }
                        let channel = u16::from_le_bytes([data[0], data[1]]);
                        let mut t = [0u8; 8];
                        t.copy_from_slice(&data[6..14]);
                        let log_time = u64::from_le_bytes(t);
                        if log_time < self.loader.start || log_time > self.loader.end {
                            continue;
                        }
                        let body = data[22..].to_vec();
                        let crc = crc32fast::hash(&body);
                        lin.single = Some((log_time, channel, body, crc));
                        return Ok(true);
                    }
                    op::CHUNK => {
                        let c = match self.loader.decode_chunk(data, self.offset_read, Vec::new()) {
                            Ok(c) => c,
                            Err(e) if self.salvage => {
                                self.damage.push(Damage { path: self.loader.path.clone(), offset: self.offset_read, kind: DamageKind::Chunk, reason: e.to_string(), lost: Vec::new() });
                                continue;
                            }
                            Err(e) => return Err(e),
                        };
                        for (id, d) in &c.learnt {
                            self.channels.entry(*id).or_insert_with(|| d.clone());
                        }
                        if !c.entries.is_empty() {
                            lin.chunk = Some(c);
                            return Ok(true);
                        }
                    }
                    op::SCHEMA | op::CHANNEL => {
                        check_record(opcode, data, self.offset_read).map_err(|r| mcap_err(&self.loader.path, at.clone(), r))?;
                        match mcap::read::parse_record(opcode, data) {
                            Ok(mcap::records::Record::Schema { header, data }) => {
                                lin.schemas.insert(header.id, (header.name, header.encoding, String::from_utf8_lossy(&data).into_owned()));
                            }
                            Ok(mcap::records::Record::Channel(c)) => {
                                let (type_name, schema_encoding, schema) = lin.schemas.get(&c.schema_id).cloned().unwrap_or_default();
                                let qos = c.metadata.get("offered_qos_profiles").cloned().unwrap_or_default();
                                self.channels.entry(c.id).or_insert(TopicDecl { name: c.topic, type_name, encoding: c.message_encoding, schema_encoding, schema, qos });
                            }
                            Ok(_) => {}
                            Err(e) => return Err(mcap_err(&self.loader.path, at, e)),
                        }
                    }
                    op::DATA_END | op::FOOTER => {
                        lin.done = true;
                        return Ok(false);
                    }
                    _ => {}
                },
                Err(e) => {
                    lin.done = true;
                    return match e {
                        mcap::McapError::UnexpectedEof | mcap::McapError::BadMagic | mcap::McapError::BadFooter => {
                            self.warnings.push(format!(
                                "{}: file ends early (cut off near {at}: {e}); the messages before that were read",
                                self.loader.path.display()
                            ));
                            self.damage.push(Damage { path: self.loader.path.clone(), offset: self.offset_read, kind: DamageKind::Truncated, reason: e.to_string(), lost: Vec::new() });
                            Ok(false)
                        }
                        other if self.salvage => {
                            self.damage.push(Damage { path: self.loader.path.clone(), offset: self.offset_read, kind: DamageKind::Unreadable, reason: other.to_string(), lost: Vec::new() });
                            Ok(false)
                        }
                        other => Err(mcap_err(&self.loader.path, at, other)),
                    };
                }
            }
        }
    }
}

impl<R: Read + Seek> Source for McapSource<R> {
    fn path(&self) -> &Path {
        &self.ctx.loader.path
    }

    fn start_time(&self) -> Option<i64> {
        let s = self.summary.as_ref()?;
        let from_stats = s.stats.as_ref().filter(|st| st.message_count > 0).map(|st| st.message_start_time);
        let from_chunks = s.chunk_indexes.iter().map(|c| c.message_start_time).min();
        from_stats.or(from_chunks).map(|t| (t.max(self.ctx.loader.start)) as i64)
    }

    fn topic(&self, topic: i64) -> Option<TopicDecl> {
        u16::try_from(topic).ok().and_then(|id| self.ctx.channels.get(&id)).cloned()
    }

    fn advance(&mut self) -> Result<bool, BagError> {
        if self.want_prefetch {
            self.want_prefetch = false;
            self.prefetch()?;
        }
        match &mut self.mode {
            Mode::Indexed(ix) => self.ctx.advance_indexed(ix),
            Mode::Linear(lin) => self.ctx.advance_linear(lin),
        }
    }

    fn head(&self) -> Option<Head<'_>> {
        match &self.mode {
            Mode::Indexed(Indexed { active, current, .. }) => {
                let c = active.get((*current)?)?;
                let e = c.entries.get(c.pos)?;
                Some(Head {
                    log_time: e.log_time as i64,
                    topic: i64::from(e.channel),
                    data: &c.buf[e.start as usize..e.end as usize],
                    at: Location::InChunk { chunk: c.offset, record: u64::from(e.record) },
                    crc: e.crc,
                })
            }
            Mode::Linear(lin) => {
                if let Some((t, ch, data, crc)) = &lin.single {
                    return Some(Head { log_time: *t as i64, topic: i64::from(*ch), data, at: Location::Offset(self.ctx.offset_read), crc: *crc });
                }
                let c = lin.chunk.as_ref()?;
                let e = c.entries.get(c.pos)?;
                Some(Head {
                    log_time: e.log_time as i64,
                    topic: i64::from(e.channel),
                    data: &c.buf[e.start as usize..e.end as usize],
                    at: Location::InChunk { chunk: c.offset, record: u64::from(e.record) },
                    crc: e.crc,
                })
            }
        }
    }

    fn take_warnings(&mut self) -> Vec<String> {
        std::mem::take(&mut self.ctx.warnings)
    }

    fn take_damage(&mut self) -> Vec<Damage> {
        std::mem::take(&mut self.ctx.damage)
    }
}
