//! CSV files read in blocks of whole lines and parsed on all threads (`leaf --input`, `keeling`).
//!
//! The file is read in large batches; each batch is cut into blocks at line breaks, so every
//! thread splits, parses and computes its own lines and nothing is parsed on one thread alone.
//! One row is one line: a quoted cell may hold commas and doubled quotes (`"A,1"`, `"say ""hi"""`)
//! as in RFC 4180, but a quoted cell that runs on past its line is refused with its line and
//! column. Empty lines are skipped (and counted), a UTF-8 byte-order mark before the header is
//! dropped, and a carriage return before a line break is part of the break.
//!
//! Line numbers stay exact without a serial count: a block reports how many lines it had and its
//! first bad row by its line within the block; the blocks are handed on in file order with the
//! running count, which turns that into the line of the file.

use std::borrow::Cow;
use std::fs::File;
use std::io::Read;
use std::ops::Range;
use std::path::{Path, PathBuf};

use rayon::prelude::*;

use crate::error::{Context, Error, Result};

/// Bytes read per batch, and the size a block aims at (it ends at the next line break).
const BATCH_BYTES: usize = 2 << 20;
const BLOCK_BYTES: usize = 64 << 10;

/// A CSV file whose header has been read, ready to be read in blocks.
pub(crate) struct CsvBlocks {
    file: File,
    path: PathBuf,
    /// Bytes read after the last complete line handed out.
    carry: Vec<u8>,
    /// True once the file has been read to its end.
    eof: bool,
    /// The line the carried bytes start on (1 = the first line of the file).
    next_line: u64,
}

/// What a block's lines gave: `out`, how many lines the block has, and its first bad row, by its
/// line within the block (0 = the block's first line) and the message after `line N`.
pub(crate) struct BlockDone<R> {
    pub out: R,
    pub lines: u64,
    pub error: Option<(u64, String)>,
}

impl CsvBlocks {
    /// Opens `path` and reads its header (the first line that is not empty), its cells trimmed
    /// of white space.
    pub(crate) fn open(path: &Path) -> Result<(Self, Vec<String>)> {
        let file = File::open(path).with_context(|| format!("cannot open {}", path.display()))?;
        let mut blocks = Self {
            file,
            path: path.to_path_buf(),
            carry: Vec::new(),
            eof: false,
            next_line: 1,
        };
        let header = loop {
            match blocks.carry.iter().position(|&b| b == b'\n') {
                Some(end) => {
                    let line = blocks.carry[..end].to_vec();
                    blocks.carry.drain(..=end);
                    blocks.next_line += 1;
                    if !line_text(&line).is_empty() {
                        break line;
                    }
                }
                None if blocks.eof => {
                    let line = std::mem::take(&mut blocks.carry);
                    blocks.next_line += 1;
                    break line;
                }
                None => blocks.fill(64 << 10)?,
            }
        };
        let header_line = blocks.next_line - 1;
        let text = line_text(header.strip_prefix(b"\xEF\xBB\xBF").unwrap_or(&header));
        let bad_header = |why: String| {
            Error::msg(format!(
                "{}: line {header_line} (the header): {why}",
                path.display()
            ))
        };
        let mut cells = Vec::new();
        if !text.is_empty() {
            split_cells(text, &mut cells).map_err(bad_header)?;
        }
        let header = cells
            .iter()
            .enumerate()
            .map(|(i, c)| {
                std::str::from_utf8(c)
                    .map(|s| s.trim().to_string())
                    .map_err(|_| bad_header(format!("column {} is not UTF-8 text", i + 1)))
            })
            .collect::<Result<Vec<_>>>()?;
        Ok((blocks, header))
    }

    /// Reads up to `bytes` more bytes onto the carried ones (into spare room: nothing is zeroed
    /// first).
    fn fill(&mut self, bytes: usize) -> Result<()> {
        self.carry.reserve(bytes);
        let n = (&mut self.file)
            .take(bytes as u64)
            .read_to_end(&mut self.carry)
            .with_context(|| format!("cannot read {}", self.path.display()))?;
        // Fewer bytes than asked for: the file has ended.
        self.eof = n < bytes;
        Ok(())
    }

    /// The next batch of whole lines, cut into blocks; `None` at the end of the file.
    fn next_batch(&mut self) -> Result<Option<Batch>> {
        if self.eof && self.carry.is_empty() {
            return Ok(None);
        }
        if !self.eof {
            self.fill(
                BATCH_BYTES
                    .saturating_sub(self.carry.len())
                    .max(BLOCK_BYTES),
            )?;
        }
        let mut text = std::mem::take(&mut self.carry);
        if !self.eof {
            // Keep the unfinished last line for the next batch; a line longer than all that was
            // read is read on, twice as much each time.
            match memchr::memrchr(b'\n', &text) {
                Some(i) => {
                    self.carry = text[i + 1..].to_vec();
                    text.truncate(i + 1);
                }
                None => {
                    let more = text.len();
                    self.carry = text;
                    self.fill(more)?;
                    return self.next_batch();
                }
            }
        }
        let mut blocks = Vec::with_capacity(text.len() / BLOCK_BYTES + 1);
        let mut start = 0;
        while start < text.len() {
            let end = match text.get(start + BLOCK_BYTES..) {
                Some(rest) => {
                    memchr::memchr(b'\n', rest).map_or(text.len(), |i| start + BLOCK_BYTES + i + 1)
                }
                None => text.len(),
            };
            blocks.push(start..end);
            start = end;
        }
        Ok(Some(Batch { text, blocks }))
    }

    /// Runs `work` on every block of the file's remaining lines on all threads, and gives each
    /// block's output to `consume` in file order, with the block's text. The first bad row in
    /// file order stops the reading, after the blocks before it are consumed, with an error that
    /// names the file and its line. While the threads work on one batch, this thread consumes
    /// the previous one and reads the next.
    pub(crate) fn for_each_block<R: Send>(
        mut self,
        work: impl Fn(&[u8]) -> BlockDone<R> + Sync,
        mut consume: impl FnMut(&[u8], R) -> Result<()>,
    ) -> Result<()> {
        let mut line = self.next_line;
        let path = self.path.clone();
        let mut hand_over = |batch: &Batch, done: Vec<BlockDone<R>>| -> Result<()> {
            for (range, d) in batch.blocks.iter().zip(done) {
                consume(&batch.text[range.clone()], d.out)?;
                if let Some((at, rest)) = d.error {
                    return Err(Error::msg(format!(
                        "{}: line {}{rest}",
                        path.display(),
                        line + at
                    )));
                }
                line += d.lines;
            }
            Ok(())
        };
        let mut prev: Option<(Batch, Vec<BlockDone<R>>)> = None;
        let mut batch = self.next_batch()?;
        while let Some(current) = batch {
            let (done, handed, next) = std::thread::scope(|s| {
                let worker = s.spawn(|| {
                    current
                        .blocks
                        .par_iter()
                        .map(|r| work(&current.text[r.clone()]))
                        .collect::<Vec<_>>()
                });
                let handed = match prev.take() {
                    Some((b, d)) => hand_over(&b, d),
                    None => Ok(()),
                };
                let next = if handed.is_ok() {
                    self.next_batch()
                } else {
                    Ok(None)
                };
                (
                    worker.join().expect("a block of rows panicked"),
                    handed,
                    next,
                )
            });
            handed?;
            let failed = done.iter().any(|d| d.error.is_some());
            prev = Some((current, done));
            batch = if failed { None } else { next? };
        }
        match prev {
            Some((b, d)) => hand_over(&b, d),
            None => Ok(()),
        }
    }
}

/// Whole lines of the file, and the blocks they are cut into.
struct Batch {
    text: Vec<u8>,
    blocks: Vec<Range<usize>>,
}

/// A line without its line break (`\n` or `\r\n`).
fn line_text(line: &[u8]) -> &[u8] {
    line.strip_suffix(b"\r").unwrap_or(line)
}

/// The rows of a block: (line within the block, 0 = first; the line's text without its break),
/// empty lines left out. `lines_seen()` after the last row is the number of lines in the block.
pub(crate) struct Rows<'a> {
    rest: &'a [u8],
    line: u64,
}

impl<'a> Rows<'a> {
    pub(crate) fn new(block: &'a [u8]) -> Self {
        Self {
            rest: block,
            line: 0,
        }
    }

    /// Lines passed so far (all of the block's once the iterator is done).
    pub(crate) fn lines_seen(&self) -> u64 {
        self.line
    }

    /// The next line split into `cells` and checked to hold the header's `n` cells: `None` at the
    /// block's end, else the line's number with, for a refused line, the reason (", …").
    pub(crate) fn next_cells(
        &mut self,
        cells: &mut Vec<Cow<'a, [u8]>>,
        n: usize,
    ) -> Option<(u64, std::result::Result<(), String>)> {
        let (at, line) = self.next()?;
        if let Err(e) = split_cells(line, cells) {
            return Some((at, Err(format!(", {e}"))));
        }
        if cells.len() != n {
            return Some((at, Err(cell_count_error(cells.len(), n))));
        }
        Some((at, Ok(())))
    }
}

impl<'a> Iterator for Rows<'a> {
    type Item = (u64, &'a [u8]);

    fn next(&mut self) -> Option<Self::Item> {
        loop {
            if self.rest.is_empty() {
                return None;
            }
            let (line, rest) = match memchr::memchr(b'\n', self.rest) {
                Some(i) => (&self.rest[..i], &self.rest[i + 1..]),
                None => (self.rest, &[][..]),
            };
            self.rest = rest;
            let at = self.line;
            self.line += 1;
            let text = line_text(line);
            if !text.is_empty() {
                return Some((at, text));
            }
        }
    }
}

/// Splits one line into its cells (not trimmed): unquoted cells are borrowed; a cell that starts
/// with `"` is unquoted (`""` inside is one `"`; text after the closing quote is kept, as
/// `csv_core` reads it). A quote left open at the end of the line is an error naming the column.
pub(crate) fn split_cells<'a>(
    line: &'a [u8],
    cells: &mut Vec<Cow<'a, [u8]>>,
) -> std::result::Result<(), String> {
    cells.clear();
    if !line.contains(&b'"') {
        cells.extend(line.split(|&b| b == b',').map(Cow::Borrowed));
        return Ok(());
    }
    let comma = |from: usize| {
        line[from..]
            .iter()
            .position(|&b| b == b',')
            .map_or(line.len(), |i| from + i)
    };
    let mut i = 0;
    loop {
        let end;
        if line.get(i) == Some(&b'"') {
            let mut cell = Vec::new();
            let mut at = i + 1;
            loop {
                let Some(q) = line[at..].iter().position(|&b| b == b'"') else {
                    return Err(format!(
                        "column {}: a quoted cell is not closed on its line (each row must be \
                         one line)",
                        cells.len() + 1
                    ));
                };
                cell.extend_from_slice(&line[at..at + q]);
                at += q + 1;
                if line.get(at) == Some(&b'"') {
                    cell.push(b'"');
                    at += 1;
                } else {
                    break;
                }
            }
            end = comma(at);
            cell.extend_from_slice(&line[at..end]);
            cells.push(Cow::Owned(cell));
        } else {
            end = comma(i);
            cells.push(Cow::Borrowed(&line[i..end]));
        }
        if end == line.len() {
            return Ok(());
        }
        i = end + 1;
    }
}

/// The message after `line N` for a row whose number of cells is not the header's.
pub(crate) fn cell_count_error(got: usize, header: usize) -> String {
    format!(": {got} cells where the header has {header}")
}
