//! A chunked line source shared by the text readers: reads large blocks from
//! the input into one reused buffer and hands out lines as byte slices, without
//! copying or allocating per line. Lines are returned without their `\n` and
//! without a trailing `\r` (CRLF files read like LF files).

use std::io::{BufRead, ErrorKind};
use std::path::PathBuf;

use crate::error::{Error, Result};

/// Size of the first read buffer; it grows only for lines longer than this.
///
/// Twice the 1 MiB buffer of [`crate::io::open_input`], so that after the
/// partial last line is moved to the front at least 1 MiB stays free and the
/// standard `BufReader` reads straight into this buffer instead of copying.
const CHUNK: usize = 2 << 20;

/// Streaming source of lines with 1-based line numbers.
pub(crate) struct Lines {
    input: Box<dyn BufRead>,
    path: PathBuf,
    buf: Vec<u8>,
    /// Start of unread data in `buf`.
    pos: usize,
    /// End of valid data in `buf`.
    end: usize,
    /// Number of the last line returned (0 before the first).
    line_no: usize,
    /// The input has reported end of file.
    eof: bool,
    /// Position and line number before the last `next_line`, for `push_back`.
    prev: Option<(usize, usize)>,
}

impl Lines {
    /// A line source over `input`, naming `path` in I/O errors.
    pub(crate) fn new(input: Box<dyn BufRead>, path: PathBuf) -> Lines {
        Lines {
            input,
            path,
            buf: Vec::new(),
            pos: 0,
            end: 0,
            line_no: 0,
            eof: false,
            prev: None,
        }
    }

    /// The next line and its 1-based number, or `None` at end of input.
    #[inline]
    pub(crate) fn next_line(&mut self) -> Result<Option<(usize, &[u8])>> {
        // Common case, inlined: the whole line is already in the buffer.
        let start = self.pos;
        if let Some(off) = self.buf.get(start..self.end).and_then(find_newline) {
            let nl = start + off;
            self.prev = Some((start, self.line_no));
            self.pos = nl + 1;
            self.line_no += 1;
            return Ok(Some((
                self.line_no,
                strip_cr(self.buf.get(start..nl).unwrap_or_default()),
            )));
        }
        self.next_line_refill()
    }

    /// [`Lines::next_line`] when no full line is buffered: reads more input.
    #[inline(never)]
    fn next_line_refill(&mut self) -> Result<Option<(usize, &[u8])>> {
        let mut scan_from = self.pos;
        loop {
            if let Some(off) = find_newline(&self.buf[scan_from..self.end]) {
                let start = self.pos;
                let nl = scan_from + off;
                self.prev = Some((start, self.line_no));
                self.pos = nl + 1;
                self.line_no += 1;
                return Ok(Some((self.line_no, strip_cr(&self.buf[start..nl]))));
            }
            if self.eof {
                if self.pos < self.end {
                    let start = self.pos;
                    self.prev = Some((start, self.line_no));
                    self.pos = self.end;
                    self.line_no += 1;
                    return Ok(Some((self.line_no, strip_cr(&self.buf[start..self.end]))));
                }
                self.prev = None;
                return Ok(None);
            }
            // Need more data: keep the partial line, then read.
            let scanned = self.end - self.pos;
            self.compact();
            scan_from = scanned;
            if self.buf.len() < CHUNK {
                self.buf.resize(CHUNK, 0);
            } else if self.end == self.buf.len() {
                let n = self.buf.len() * 2;
                self.buf.resize(n, 0);
            }
            self.fill()?;
        }
    }

    /// The buffered input from the start of the next line on (possibly
    /// empty, possibly ending inside a line), for parsers that read a line in
    /// place and then [`consume`](Self::consume) it.
    #[inline(always)]
    pub(crate) fn rest(&self) -> &[u8] {
        self.buf.get(self.pos..self.end).unwrap_or_default()
    }

    /// Counts `lines` whole lines of [`rest`](Self::rest), `bytes` long in
    /// all with their `\n`s, the last of them `last` bytes long, as read.
    #[inline(always)]
    pub(crate) fn consume_run(&mut self, bytes: usize, lines: usize, last: usize) {
        self.prev = Some((self.pos + bytes - last, self.line_no + lines - 1));
        self.pos += bytes;
        self.line_no += lines;
    }

    /// Makes the last line returned by [`Lines::next_line`] the next one again.
    /// Only one line can be pushed back.
    pub(crate) fn push_back(&mut self) {
        if let Some((pos, line_no)) = self.prev.take() {
            self.pos = pos;
            self.line_no = line_no;
        }
    }

    fn compact(&mut self) {
        if self.pos > 0 {
            self.buf.copy_within(self.pos..self.end, 0);
            self.end -= self.pos;
            self.pos = 0;
            self.prev = None;
        }
    }

    fn fill(&mut self) -> Result<()> {
        loop {
            match self.input.read(&mut self.buf[self.end..]) {
                Ok(0) => {
                    self.eof = true;
                    return Ok(());
                }
                Ok(n) => {
                    self.end += n;
                    return Ok(());
                }
                Err(e) if e.kind() == ErrorKind::Interrupted => continue,
                Err(e) => return Err(Error::io(&self.path, e)),
            }
        }
    }
}

#[inline]
fn strip_cr(line: &[u8]) -> &[u8] {
    match line.split_last() {
        Some((b'\r', rest)) => rest,
        _ => line,
    }
}

/// Position of the first `\n` in `hay`, eight bytes at a time (the classic
/// "has zero byte" word trick; exact for the lowest matching byte).
#[inline]
pub(crate) fn find_newline(hay: &[u8]) -> Option<usize> {
    const LO: u64 = 0x0101_0101_0101_0101;
    const HI: u64 = 0x8080_8080_8080_8080;
    const NL: u64 = 0x0a0a_0a0a_0a0a_0a0a;
    let mut chunks = hay.chunks_exact(8);
    let mut base = 0;
    for c in &mut chunks {
        let mut w = [0u8; 8];
        w.copy_from_slice(c);
        let x = u64::from_le_bytes(w) ^ NL;
        let t = x.wrapping_sub(LO) & !x & HI;
        if t != 0 {
            return Some(base + (t.trailing_zeros() / 8) as usize);
        }
        base += 8;
    }
    chunks
        .remainder()
        .iter()
        .position(|&b| b == b'\n')
        .map(|p| base + p)
}

/// Iterator over the whitespace-separated fields of a line.
#[inline]
pub(crate) fn fields(line: &[u8]) -> impl Iterator<Item = &[u8]> {
    line.split(|b| b.is_ascii_whitespace())
        .filter(|t| !t.is_empty())
}

/// `line` without leading and trailing ASCII whitespace.
#[inline]
pub(crate) fn trim(line: &[u8]) -> &[u8] {
    line.trim_ascii()
}

/// Columns `from..to` (0-based, half-open) of a line, clipped to its length.
#[inline]
pub(crate) fn cols(line: &[u8], from: usize, to: usize) -> &[u8] {
    let to = to.min(line.len());
    if from >= to {
        &[]
    } else {
        &line[from..to]
    }
}

/// A short printable excerpt of a byte string for error messages.
pub(crate) fn show(bytes: &[u8]) -> String {
    let s = String::from_utf8_lossy(bytes);
    let s = s.trim();
    if s.chars().count() > 40 {
        let mut t: String = s.chars().take(40).collect();
        t.push('…');
        t
    } else {
        s.to_string()
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use std::io::Cursor;

    fn all(text: &[u8]) -> Vec<(usize, Vec<u8>)> {
        let mut l = Lines::new(Box::new(Cursor::new(text.to_vec())), "t".into());
        let mut out = Vec::new();
        while let Some((n, s)) = l.next_line().unwrap() {
            out.push((n, s.to_vec()));
        }
        out
    }

    #[test]
    fn splits_lines_crlf_and_last_without_newline() {
        let v = all(b"a\r\nbb\n\nccc");
        assert_eq!(
            v,
            vec![
                (1, b"a".to_vec()),
                (2, b"bb".to_vec()),
                (3, b"".to_vec()),
                (4, b"ccc".to_vec())
            ]
        );
        assert!(all(b"").is_empty());
    }

    #[test]
    fn find_newline_matches_naive() {
        let text: Vec<u8> = (0..200u32)
            .map(|i| {
                if i % 13 == 7 {
                    b'\n'
                } else {
                    b'a' + (i % 26) as u8
                }
            })
            .collect();
        for s in 0..text.len() {
            let naive = text[s..].iter().position(|&b| b == b'\n');
            assert_eq!(find_newline(&text[s..]), naive);
        }
        assert_eq!(find_newline(b"\x0b\x0a"), Some(1));
        assert_eq!(find_newline(b"\x8a\x0b\x09\x0a"), Some(3));
    }

    #[test]
    fn long_lines_grow_the_buffer_and_push_back_works() {
        let long = vec![b'x'; 3 * CHUNK + 17];
        let mut text = long.clone();
        text.extend_from_slice(b"\nend\n");
        let mut l = Lines::new(Box::new(Cursor::new(text)), "t".into());
        let (n, s) = l.next_line().unwrap().unwrap();
        assert_eq!((n, s.len()), (1, long.len()));
        let (n, s) = l.next_line().unwrap().unwrap();
        assert_eq!((n, s), (2, &b"end"[..]));
        l.push_back();
        let (n, s) = l.next_line().unwrap().unwrap();
        assert_eq!((n, s), (2, &b"end"[..]));
        assert!(l.next_line().unwrap().is_none());
    }
}
