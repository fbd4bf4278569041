//! Line numbers of CSV records that are right for both LF and CRLF files.
//!
//! The csv crate's `Position::line` counts LF bytes consumed so far. With CRLF line endings its
//! parser ends a record at the CR and consumes the LF only when it reads the next record, so a
//! record's start position is taken before the LF that ends the previous line is counted: every
//! line number comes out one too low. Counting from the record's byte offset, after skipping
//! the line terminators in front of it, gives the line of the record's first character for
//! either ending (and for blank lines between records). Messages number lines from 1.

/// Turns record byte offsets into 1-based line numbers. Offsets are usually asked for in
/// increasing order, which costs one pass over the text in all; an earlier offset restarts the
/// count.
pub struct LineCounter<'a> {
    text: &'a [u8],
    /// Byte offset counted up to, and the line it is on.
    offset: usize,
    line: usize,
}

impl<'a> LineCounter<'a> {
    /// A counter over the exact text given to the CSV reader (after any byte-order mark was
    /// removed), so the reader's byte offsets index it.
    pub fn new(text: &'a str) -> Self {
        LineCounter { text: text.as_bytes(), offset: 0, line: 1 }
    }

    /// The line of the first character of the record that starts at byte `start`.
    pub fn line_at(&mut self, start: u64) -> usize {
        let len = self.text.len();
        let mut start = usize::try_from(start).unwrap_or(len).min(len);
        while start < len && matches!(self.text.get(start), Some(b'\r' | b'\n')) {
            start += 1;
        }
        if start < self.offset {
            (self.offset, self.line) = (0, 1);
        }
        let newlines = self.text.get(self.offset..start).map_or(0, |s| s.iter().filter(|&&b| b == b'\n').count());
        self.line += newlines;
        self.offset = start;
        self.line
    }

    /// The line of a record (its position's byte offset), or `fallback` when it has none.
    pub fn line_of(&mut self, position: Option<&csv::Position>, fallback: usize) -> usize {
        position.map_or(fallback, |p| self.line_at(p.byte()))
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Lines of every record and of the error of a malformed row, for one text.
    fn lines(text: &str) -> (Vec<usize>, Option<usize>) {
        let mut reader = csv::ReaderBuilder::new().from_reader(text.as_bytes());
        let mut counter = LineCounter::new(text);
        let mut out = Vec::new();
        for record in reader.records() {
            match record {
                Ok(r) => out.push(counter.line_of(r.position(), 0)),
                Err(e) => return (out, Some(counter.line_of(e.position(), 0))),
            }
        }
        (out, None)
    }

    #[test]
    fn lf_and_crlf_give_the_same_lines() {
        // Header on line 1, records on lines 2, 3 and (after a blank line) 5.
        let lf = "a,b\n1,2\n3,4\n\n5,6\n";
        assert_eq!(lines(lf), (vec![2, 3, 5], None));
        assert_eq!(lines(&lf.replace('\n', "\r\n")), (vec![2, 3, 5], None));
    }

    #[test]
    fn the_crate_alone_is_one_line_short_with_crlf() {
        // The cause this module works around; should a csv release change it, this shows.
        let text = "a,b\r\n1,2\r\n3,4\r\n";
        let mut reader = csv::ReaderBuilder::new().from_reader(text.as_bytes());
        let crate_lines: Vec<u64> =
            reader.records().map(|r| r.expect("valid").position().map_or(0, |p| p.line())).collect();
        assert_eq!(crate_lines, [1, 2]);
        assert_eq!(lines(text).0, [2, 3]);
    }

    #[test]
    fn an_error_names_the_line_of_its_record() {
        let text = "a,b\r\n1,2\r\n3\r\n4,5\r\n";
        assert_eq!(lines(text), (vec![2], Some(3)));
        assert_eq!(lines(&text.replace("\r\n", "\n")), (vec![2], Some(3)));
    }
}
