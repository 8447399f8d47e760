//! csv records in batches. From a regular file, one thread parses while a second checks and sums
//! (parsing takes about as long as everything else); batches travel over a bounded channel, so
//! memory stays at a few batches, and emptied batches come back to be refilled. From a pipe or a
//! terminal, records are handed over one by one on the calling thread, so that an error is reported
//! without waiting for input that may be slow to come.

use std::io::Read;
use std::sync::mpsc;

use super::super::input;

/// Records read ahead. Their fields are copied back to back into one buffer: the summing thread
/// then reads memory laid out in order, rather than a thousand small records that were each last
/// written on the other core.
#[derive(Default)]
pub(super) struct Batch {
    bytes: Vec<u8>,
    /// End of every field in `bytes`.
    ends: Vec<usize>,
    pub records: Vec<BatchRecord>,
    /// An error that ends reading, after the records above.
    pub fatal: Option<csv::Error>,
}

pub(super) struct BatchRecord {
    /// Where its fields start in `bytes` and in `ends`, and its field count.
    bytes_from: usize,
    ends_from: usize,
    fields: usize,
    /// The reader's line count before and after the record.
    pub start: u64,
    pub end: u64,
    /// A csv error confined to the row (which is then rejected).
    pub error: Option<csv::Error>,
}

impl Batch {
    fn clear(&mut self) {
        self.bytes.clear();
        self.ends.clear();
        self.records.clear();
        self.fatal = None;
    }

    fn push(&mut self, r: &csv::ByteRecord, start: u64, end: u64, error: Option<csv::Error>) {
        let base = self.bytes.len();
        self.records.push(BatchRecord {
            bytes_from: base,
            ends_from: self.ends.len(),
            fields: r.len(),
            start,
            end,
            error,
        });
        self.bytes.extend_from_slice(r.as_slice());
        let mut end = base;
        for field in r {
            end += field.len();
            self.ends.push(end);
        }
    }

    pub(super) fn record(&self, k: usize) -> Fields<'_> {
        let r = &self.records[k];
        Fields {
            bytes: &self.bytes,
            from: r.bytes_from,
            ends: &self.ends[r.ends_from..r.ends_from + r.fields],
        }
    }
}

/// The fields of one record in a [`Batch`].
#[derive(Clone, Copy)]
pub(super) struct Fields<'a> {
    bytes: &'a [u8],
    from: usize,
    ends: &'a [usize],
}

impl<'a> Fields<'a> {
    pub(super) fn get(&self, i: usize) -> Option<&'a [u8]> {
        let end = *self.ends.get(i)?;
        let start = if i == 0 { self.from } else { self.ends[i - 1] };
        Some(&self.bytes[start..end])
    }

    /// The record as csv gave it (for the rare paths that need one).
    pub(super) fn to_byte_record(self) -> csv::ByteRecord {
        (0..self.ends.len()).filter_map(|i| self.get(i)).collect()
    }
}

/// Records per [`Batch`] on two threads, and batches that may wait in the channel.
const BATCH: usize = 4096;
const BATCHES_IN_FLIGHT: usize = 4;

/// Hand every record of `rdr` to `consume`, in batches, on two threads (`threaded`) or on this
/// one. `consume` gets the batches and a function that takes each emptied batch back.
pub(super) fn stream<R: Read, T: Send>(
    rdr: &mut csv::Reader<R>,
    threaded: bool,
    consume: impl FnOnce(&mut dyn Iterator<Item = Batch>, &mut dyn FnMut(Batch)) -> T + Send,
) -> T {
    if !threaded {
        let (spare_tx, spare_rx) = mpsc::channel::<Batch>();
        let mut record = csv::ByteRecord::new();
        let mut more = true;
        let mut batches = std::iter::from_fn(|| {
            if !more {
                return None;
            }
            let mut batch = spare_rx.try_recv().unwrap_or_default();
            more = fill(rdr, &mut record, &mut batch, 1);
            (!batch.records.is_empty() || batch.fatal.is_some()).then_some(batch)
        });
        return consume(&mut batches, &mut |b| {
            let _ = spare_tx.send(b);
        });
    }
    std::thread::scope(|scope| {
        let (full_tx, full_rx) = mpsc::sync_channel::<Batch>(BATCHES_IN_FLIGHT);
        let (empty_tx, empty_rx) = mpsc::channel::<Batch>();
        let worker = scope.spawn(move || {
            // The parsing thread may have finished; then a spare batch is simply dropped.
            consume(&mut full_rx.into_iter(), &mut |b| {
                let _ = empty_tx.send(b);
            })
        });
        read_batches(rdr, &full_tx, &empty_rx);
        // Closing the channel ends the worker's loop.
        drop(full_tx);
        worker
            .join()
            .unwrap_or_else(|panic| std::panic::resume_unwind(panic))
    })
}

/// Read the whole input into batches and send them, until the end, an error that ends reading,
/// or the receiver hanging up (the aggregation stopped early).
fn read_batches<R: Read>(
    rdr: &mut csv::Reader<R>,
    full: &mpsc::SyncSender<Batch>,
    empty: &mpsc::Receiver<Batch>,
) {
    let mut record = csv::ByteRecord::new();
    loop {
        let mut batch = empty.try_recv().unwrap_or_default();
        let more = fill(rdr, &mut record, &mut batch, BATCH);
        if full.send(batch).is_err() || !more {
            return;
        }
    }
}

/// Empty `batch` and read up to `limit` records into it through `record`; whether there may be
/// more (false at the end of the input or after an error that ends reading).
fn fill<R: Read>(
    rdr: &mut csv::Reader<R>,
    record: &mut csv::ByteRecord,
    batch: &mut Batch,
    limit: usize,
) -> bool {
    batch.clear();
    while batch.records.len() < limit {
        let start = rdr.position().line();
        let error = match rdr.read_byte_record(record) {
            Ok(false) => return false,
            Ok(true) => None,
            Err(e) if input::is_row_error(&e) => Some(e),
            Err(e) => {
                batch.fatal = Some(e);
                return false;
            }
        };
        batch.push(record, start, rdr.position().line(), error);
    }
    true
}
