//! Rows of a CSV file read in blocks for parallel parsing (`leaf --input`, `keeling`): each block
//! keeps its rows' trimmed cells one after another, where each cell ends, and the line each row
//! starts on, so a thread can parse a block and report a bad cell by line.

use std::path::Path;

use crate::error::{Context, Error};

/// Rows as read: the trimmed cells one after another (`text`), where each ends, and each row's
/// line.
#[derive(Default)]
pub(crate) struct Block<T> {
    pub text: T,
    pub ends: Vec<usize>,
    pub lines: Vec<u64>,
}

/// Blocks read in one go, and how the reading ended: `None` while rows remain, `Some(None)` at
/// the end of the file, `Some(Some(error))` at an unreadable row.
pub(crate) struct Batch<T> {
    pub blocks: Vec<Block<T>>,
    pub end: Option<Option<Error>>,
}

/// The text of a block: `String` (cells read as UTF-8, trimmed of Unicode white space) or
/// `Vec<u8>` (cells as bytes, trimmed of ASCII white space).
pub(crate) trait BlockText: Default {
    /// The csv record the cells are read into.
    type Record;
    /// Reads the next row into `rec`; false at the end of the file.
    fn read<R: std::io::Read>(
        rdr: &mut csv::Reader<R>,
        rec: &mut Self::Record,
    ) -> csv::Result<bool>;
    /// The line the row in `rec` starts on.
    fn line(rec: &Self::Record) -> u64;
    /// Appends the row's trimmed cells, noting where each ends.
    fn push_cells(&mut self, rec: &Self::Record, ends: &mut Vec<usize>);
}

impl BlockText for String {
    type Record = csv::StringRecord;
    fn read<R: std::io::Read>(
        rdr: &mut csv::Reader<R>,
        rec: &mut Self::Record,
    ) -> csv::Result<bool> {
        rdr.read_record(rec)
    }
    fn line(rec: &Self::Record) -> u64 {
        rec.position().map_or(0, |p| p.line())
    }
    fn push_cells(&mut self, rec: &Self::Record, ends: &mut Vec<usize>) {
        for f in rec.iter() {
            self.push_str(f.trim());
            ends.push(self.len());
        }
    }
}

impl BlockText for Vec<u8> {
    type Record = csv::ByteRecord;
    fn read<R: std::io::Read>(
        rdr: &mut csv::Reader<R>,
        rec: &mut Self::Record,
    ) -> csv::Result<bool> {
        rdr.read_byte_record(rec)
    }
    fn line(rec: &Self::Record) -> u64 {
        rec.position().map_or(0, |p| p.line())
    }
    fn push_cells(&mut self, rec: &Self::Record, ends: &mut Vec<usize>) {
        for cell in rec.iter() {
            self.extend_from_slice(cell.trim_ascii());
            ends.push(self.len());
        }
    }
}

/// Reads up to `batch_blocks` blocks of `block_rows` rows from `rdr` (the file `path`, named in
/// a read error).
pub(crate) fn read_batch<T: BlockText, R: std::io::Read>(
    rdr: &mut csv::Reader<R>,
    rec: &mut T::Record,
    path: &Path,
    block_rows: usize,
    batch_blocks: usize,
) -> Batch<T> {
    let mut blocks: Vec<Block<T>> = Vec::with_capacity(batch_blocks);
    let mut block = Block::<T>::default();
    let end = loop {
        match T::read(rdr, rec) {
            Ok(true) => {
                block.lines.push(T::line(rec));
                block.text.push_cells(rec, &mut block.ends);
                if block.lines.len() == block_rows {
                    blocks.push(std::mem::take(&mut block));
                    if blocks.len() == batch_blocks {
                        break None;
                    }
                }
            }
            Ok(false) => break Some(None),
            Err(e) => {
                let e = Err::<(), _>(e).with_context(|| format!("cannot read {}", path.display()));
                break Some(e.err());
            }
        }
    };
    if !block.lines.is_empty() {
        blocks.push(block);
    }
    Batch { blocks, end }
}
