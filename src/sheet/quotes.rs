//! Whether delimited text ends inside a quoted cell: an unclosed quote makes a CSV reader
//! take every later line into one cell, so rows would vanish in silence. The state
//! follows the reader's own rules (a quote opens a quoted cell only at the start of a
//! cell; `""` inside it is a quote; the cell ends at the next lone quote), byte by byte,
//! so it can run over a stream as it is read.

use crate::limits::MAX_LINE_BYTES;
use std::io::Read;

/// Why a line was refused: longer than [`MAX_LINE_BYTES`] (a file with no line breaks,
/// such as a device that never ends, or a cell far larger than any table needs). With
/// the line's number when the message does not already name it.
pub fn line_too_long(line: Option<usize>) -> String {
    let which = line.map_or("the line".to_string(), |l| format!("line {l}"));
    format!(
        "{which} is longer than {} MB; a table's lines are far shorter (this is not \
         delimited text of rows, or a cell holds far more than a table needs)",
        MAX_LINE_BYTES >> 20
    )
}

/// Quote state over delimited text.
#[derive(Debug, Clone, PartialEq)]
pub struct QuoteState {
    delimiter: u8,
    at_cell_start: bool,
    in_quotes: bool,
    quote_seen: bool,
    line: usize,
    opened_at: usize,
    line_bytes: usize,
    too_long: Option<usize>,
    records: usize,
    record_open: bool,
}

impl QuoteState {
    /// The state at the start of a file delimited by `delimiter`.
    pub fn new(delimiter: u8) -> Self {
        QuoteState {
            delimiter,
            at_cell_start: true,
            in_quotes: false,
            quote_seen: false,
            line: 1,
            opened_at: 0,
            line_bytes: 0,
            too_long: None,
            records: 0,
            record_open: false,
        }
    }

    /// Take in the next bytes of the text.
    pub fn feed(&mut self, bytes: &[u8]) {
        if !self.in_quotes && memchr::memchr(b'"', bytes).is_none() {
            self.feed_unquoted(bytes);
        } else {
            self.feed_bytewise(bytes);
        }
    }

    /// Take in bytes one at a time (any text).
    fn feed_bytewise(&mut self, bytes: &[u8]) {
        for &b in bytes {
            if b == b'\n' || b == b'\r' {
                // Either ends a line for the reader (only \n counts in line numbers).
                self.line += usize::from(b == b'\n');
                self.line_bytes = 0;
            } else {
                self.line_bytes += 1;
                if self.line_bytes > MAX_LINE_BYTES && self.too_long.is_none() {
                    self.too_long = Some(self.line);
                }
            }
            if self.in_quotes {
                if self.quote_seen {
                    self.quote_seen = false;
                    if b == b'"' {
                        continue; // "" is a quote inside the cell
                    }
                    self.in_quotes = false; // the lone quote closed the cell
                } else {
                    self.quote_seen = b == b'"';
                    continue;
                }
            }
            if b == b'\n' || b == b'\r' {
                // A line break outside quotes ends a record, unless the line was empty
                // (the reader skips empty lines).
                if self.record_open {
                    self.records += 1;
                }
                self.record_open = false;
                self.at_cell_start = true;
                continue;
            }
            self.record_open = true;
            if b == self.delimiter {
                self.at_cell_start = true;
            } else if self.at_cell_start && b == b'"' {
                self.in_quotes = true;
                self.at_cell_start = false;
                self.opened_at = self.line;
            } else {
                self.at_cell_start = false;
            }
        }
    }

    /// Take in bytes that hold no quote, outside quotes (as most text is): line by line
    /// rather than byte by byte, to the same state.
    fn feed_unquoted(&mut self, bytes: &[u8]) {
        let mut start = 0;
        for end in memchr::memchr2_iter(b'\n', b'\r', bytes) {
            self.line_part(end - start);
            if self.record_open {
                self.records += 1;
            }
            self.record_open = false;
            self.line += usize::from(bytes[end] == b'\n');
            self.line_bytes = 0;
            start = end + 1;
        }
        self.line_part(bytes.len() - start);
        if let Some(&last) = bytes.last() {
            self.at_cell_start = last == self.delimiter || last == b'\n' || last == b'\r';
        }
    }

    /// `len` more bytes of the current line, none a line break or a quote.
    fn line_part(&mut self, len: usize) {
        if len == 0 {
            return;
        }
        self.record_open = true;
        self.line_bytes += len;
        if self.line_bytes > MAX_LINE_BYTES && self.too_long.is_none() {
            self.too_long = Some(self.line);
        }
    }

    /// The records in the text so far, as the reader counts them (a record ends at a
    /// line break outside quotes; empty lines are none; a last line without a break is
    /// one): a count of its own, to check the reader's against.
    pub fn records(&self) -> usize {
        self.records + usize::from(self.record_open)
    }

    /// The first line longer than [`MAX_LINE_BYTES`], if one was read.
    pub fn too_long(&self) -> Option<usize> {
        self.too_long
    }

    /// At the end of the text: the line (counted from 1, every line break counting) where
    /// a quote opened that was never closed, if one was.
    pub fn unclosed(&self) -> Option<usize> {
        (self.in_quotes && !self.quote_seen).then_some(self.opened_at)
    }
}

/// A reader that follows the quote state of the bytes read through it.
pub struct TrackQuotes<R> {
    inner: R,
    state: QuoteState,
}

impl<R> TrackQuotes<R> {
    /// Follow `inner`, delimited by `delimiter`.
    pub fn new(inner: R, delimiter: u8) -> Self {
        TrackQuotes {
            inner,
            state: QuoteState::new(delimiter),
        }
    }

    /// The quote state of what has been read so far.
    pub fn state(&self) -> &QuoteState {
        &self.state
    }
}

impl<R: Read> Read for TrackQuotes<R> {
    fn read(&mut self, buf: &mut [u8]) -> std::io::Result<usize> {
        let n = self.inner.read(buf)?;
        self.state.feed(&buf[..n]);
        match self.state.too_long() {
            Some(line) => Err(std::io::Error::new(
                std::io::ErrorKind::InvalidData,
                line_too_long(Some(line)),
            )),
            None => Ok(n),
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;

    proptest! {
        /// Text without quotes taken in line by line leaves the state that byte by byte
        /// does, however the text is cut into pieces (and with quotes, the byte-by-byte
        /// pass takes over where one appears).
        #[test]
        fn lines_at_a_time_agree_with_bytes_at_a_time(
            text in proptest::collection::vec(
                proptest::sample::select(vec![b'a', b',', b';', b' ', b'\n', b'\r', b'"']),
                0..200,
            ),
            cuts in proptest::collection::vec(0usize..200, 0..6),
        ) {
            let mut cuts: Vec<usize> = cuts.into_iter().map(|c| c.min(text.len())).collect();
            cuts.push(0);
            cuts.push(text.len());
            cuts.sort_unstable();
            let (mut fast, mut slow) = (QuoteState::new(b','), QuoteState::new(b','));
            for w in cuts.windows(2) {
                fast.feed(&text[w[0]..w[1]]);
                slow.feed_bytewise(&text[w[0]..w[1]]);
                prop_assert_eq!(&fast, &slow);
            }
        }
    }

    /// A line over the limit is found on the fast path at the line where the slow one
    /// finds it.
    #[test]
    fn a_long_line_is_found_by_either_pass() {
        let mut text = b"a,b\n1,2\n".to_vec();
        text.extend(std::iter::repeat_n(b'x', MAX_LINE_BYTES + 1));
        text.extend(b"\n3,4\n");
        let (mut fast, mut slow) = (QuoteState::new(b','), QuoteState::new(b','));
        for piece in text.chunks(1 << 20) {
            fast.feed(piece);
            slow.feed_bytewise(piece);
        }
        assert_eq!(fast.too_long(), Some(3));
        assert_eq!(fast, slow);
    }

    /// The line where an unclosed quote opened in `text`, if one did.
    fn unclosed_quote(text: &[u8], delimiter: u8) -> Option<usize> {
        let mut s = QuoteState::new(delimiter);
        s.feed(text);
        s.unclosed()
    }

    /// Cross-checked with the csv crate's reader: where it reads as many records as there
    /// are lines, no quote is open; where one record swallows the rest, one is.
    #[test]
    fn open_quotes_are_found_where_the_reader_swallows_rows() {
        let cases: [(&[u8], Option<usize>); 9] = [
            (b"a,b\n1,2\n3,4\n", None),
            (b"a,b\n\"1,2\n3,4\n5,6\n", Some(2)),
            (b"a,b\n\"x\"\"y\",2\n3,4\n", None),
            (b"a,b\n\"line\nbreak\",2\n3,4\n", None),
            (b"a,b\n5\" tall,2\n3,4\n", None),
            (b"a,b\n\"a\"b\"c,2\n3,4\n", None),
            (b"a,b\r\n1,\"2\r\n3,4\r\n", Some(2)),
            (b"\"a,b\n1,2\n", Some(1)),
            (b"a,b\n1,\"2\"", None),
        ];
        for (text, want) in cases {
            assert_eq!(
                unclosed_quote(text, b','),
                want,
                "{}",
                String::from_utf8_lossy(text)
            );
            // The csv crate's own reading agrees: an open quote swallows the later lines.
            let mut r = csv::ReaderBuilder::new()
                .has_headers(false)
                .flexible(true)
                .from_reader(text);
            let records = r.byte_records().count();
            let lines = text
                .split(|&b| b == b'\n')
                .filter(|l| !l.is_empty())
                .count();
            let line_breaks_in_cells = usize::from(text.windows(6).any(|w| w == b"line\nb"));
            if want.is_some() {
                assert!(records < lines, "{}", String::from_utf8_lossy(text));
            } else {
                assert_eq!(records + line_breaks_in_cells, lines);
            }
        }
    }

    /// The records counted by the quote state are the records the csv crate's reader
    /// returns, on blank lines, CR, CRLF, quoted line breaks, lone-delimiter lines and a
    /// last line without a break.
    #[test]
    fn records_are_counted_as_the_reader_counts_them() {
        let cases: [&[u8]; 8] = [
            b"a,b\n1,2\n3,4\n",
            b"a,b\n\n\n1,2\n",
            b"a,b\r\n1,2\r\n\r\n3,4",
            b"a,b\r1,2\r3,4\r",
            b"a,b\n\"x\ny\",2\n3,4\n",
            b"a,b\n,\n  \n5,6\n",
            b"a,b\n\"q\"\"\",1\n",
            b"\n\na\n",
        ];
        for text in cases {
            let mut st = QuoteState::new(b',');
            st.feed(text);
            let got = csv::ReaderBuilder::new()
                .has_headers(false)
                .flexible(true)
                .from_reader(text)
                .byte_records()
                .count();
            assert_eq!(st.records(), got, "{}", String::from_utf8_lossy(text));
        }
    }

    #[test]
    fn a_stream_is_followed_as_it_is_read() {
        let text = b"a;b\n1;\"2\n3;4\n".to_vec();
        let mut t = TrackQuotes::new(std::io::Cursor::new(text), b';');
        let mut sink = Vec::new();
        t.read_to_end(&mut sink).unwrap();
        assert_eq!(t.state().unclosed(), Some(2));
    }
}
