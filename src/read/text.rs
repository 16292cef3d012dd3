//! Delimited text: decoding the bytes, finding the delimiter, and splitting
//! records one at a time (RFC 4180 quoting: doubled quotes inside quotes,
//! line breaks inside quotes, CRLF or LF line ends), so that a large file is
//! walked, never copied into a grid of strings.

use super::ReadError;
use std::borrow::Cow;

/// How the bytes were decoded.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Encoding {
    Utf8,
    Utf8Bom,
    Windows1252,
}

impl Encoding {
    pub fn name(self) -> &'static str {
        match self {
            Encoding::Utf8 => "UTF-8",
            Encoding::Utf8Bom => "UTF-8 with byte-order mark",
            Encoding::Windows1252 => "Windows-1252",
        }
    }
}

/// Decodes text: UTF-8 (a byte-order mark is dropped), or Windows-1252 when
/// the bytes are not UTF-8. A NUL byte means the bytes are not text.
pub fn decode(bytes: &[u8]) -> Result<(Cow<'_, str>, Encoding), ReadError> {
    if let Some(pos) = bytes.iter().take(1 << 16).position(|&b| b == 0) {
        return Err(ReadError::NotText { offset: pos });
    }
    if let Some(rest) = bytes.strip_prefix(b"\xEF\xBB\xBF") {
        return match std::str::from_utf8(rest) {
            Ok(s) => Ok((Cow::Borrowed(s), Encoding::Utf8Bom)),
            Err(e) => Err(ReadError::NotText { offset: e.valid_up_to() + 3 }),
        };
    }
    match std::str::from_utf8(bytes) {
        Ok(s) => Ok((Cow::Borrowed(s), Encoding::Utf8)),
        Err(_) => {
            let (s, _, _) = encoding_rs::WINDOWS_1252.decode(bytes);
            Ok((s, Encoding::Windows1252))
        }
    }
}

/// One record: its cells and the 1-based line it starts on.
#[derive(Debug, PartialEq)]
pub struct Record<'a> {
    pub line: usize,
    pub cells: Vec<Cow<'a, str>>,
}

impl Record<'_> {
    pub fn is_blank(&self) -> bool {
        self.cells.iter().all(|c| c.trim().is_empty())
    }
}

/// An iterator over the records of a text.
pub struct Records<'a> {
    text: &'a str,
    pos: usize,
    line: usize,
    delim: u8,
}

impl<'a> Records<'a> {
    pub fn new(text: &'a str, delim: u8) -> Records<'a> {
        Records { text, pos: 0, line: 1, delim }
    }

    /// The byte offset of the next record.
    pub fn position(&self) -> usize {
        self.pos
    }
}

impl<'a> Iterator for Records<'a> {
    type Item = Result<Record<'a>, ReadError>;

    fn next(&mut self) -> Option<Self::Item> {
        let b = self.text.as_bytes();
        if self.pos >= b.len() {
            return None;
        }
        let start_line = self.line;
        let mut cells = Vec::new();
        loop {
            // Leading spaces before an opening quote are allowed.
            let mut i = self.pos;
            while i < b.len() && b[i] == b' ' {
                i += 1;
            }
            if i < b.len() && b[i] == b'"' {
                let quote_line = self.line;
                let mut s = String::new();
                let mut j = i + 1;
                let mut seg = j;
                loop {
                    if j >= b.len() {
                        return Some(Err(ReadError::UnclosedQuote { line: quote_line }));
                    }
                    match b[j] {
                        b'"' if j + 1 < b.len() && b[j + 1] == b'"' => {
                            s.push_str(&self.text[seg..=j]);
                            j += 2;
                            seg = j;
                        }
                        b'"' => {
                            s.push_str(&self.text[seg..j]);
                            j += 1;
                            break;
                        }
                        b'\n' => {
                            self.line += 1;
                            j += 1;
                        }
                        _ => j += 1,
                    }
                }
                // Text between the closing quote and the delimiter is kept.
                let tail_start = j;
                while j < b.len() && b[j] != self.delim && b[j] != b'\n' && b[j] != b'\r' {
                    j += 1;
                }
                s.push_str(&self.text[tail_start..j]);
                cells.push(Cow::Owned(s));
                self.pos = j;
            } else {
                let mut j = self.pos;
                while j < b.len() && b[j] != self.delim && b[j] != b'\n' && b[j] != b'\r' {
                    j += 1;
                }
                cells.push(Cow::Borrowed(&self.text[self.pos..j]));
                self.pos = j;
            }
            let j = self.pos;
            if j >= b.len() {
                break;
            }
            if b[j] == self.delim {
                self.pos = j + 1;
                if self.pos >= b.len() {
                    cells.push(Cow::Borrowed(""));
                    break;
                }
                continue;
            }
            // A line end.
            self.pos = if b[j] == b'\r' && j + 1 < b.len() && b[j + 1] == b'\n' { j + 2 } else { j + 1 };
            self.line += 1;
            break;
        }
        Some(Ok(Record { line: start_line, cells }))
    }
}

/// Candidate delimiters, in order of preference when scores tie.
pub const DELIMITERS: [u8; 4] = [b',', b';', b'\t', b'|'];

/// Picks the delimiter whose split of the first records gives the most
/// consistent number of cells (more than one). Falls back to a comma.
pub fn sniff_delimiter(text: &str) -> u8 {
    let mut best = (b',', 0usize, 0usize); // (delim, rows agreeing, cells)
    for &d in &DELIMITERS {
        let counts: Vec<usize> = Records::new(text, d)
            .take(60)
            .filter_map(Result::ok)
            .filter(|r| !r.is_blank())
            .map(|r| r.cells.len())
            .collect();
        if counts.is_empty() {
            continue;
        }
        // The most common cell count above 1, and how many rows have it.
        let mut modes: Vec<(usize, usize)> = Vec::new();
        for &c in &counts {
            match modes.iter_mut().find(|(k, _)| *k == c) {
                Some((_, n)) => *n += 1,
                None => modes.push((c, 1)),
            }
        }
        if let Some(&(cells, agree)) = modes.iter().filter(|(k, _)| *k > 1).max_by_key(|(k, n)| (*n, *k)) {
            if (agree, cells) > (best.1, best.2) {
                best = (d, agree, cells);
            }
        }
    }
    best.0
}

#[cfg(test)]
mod tests {
    use super::*;

    fn cells(text: &str, delim: u8) -> Vec<(usize, Vec<String>)> {
        Records::new(text, delim).map(|r| r.unwrap()).map(|r| (r.line, r.cells.iter().map(|c| c.to_string()).collect())).collect()
    }

    #[test]
    fn records_keep_quotes_and_line_numbers() {
        let got = cells("a,\"b \"\"q\"\"\"\r\n\"x\ny\",2\n3,\n", b',');
        assert_eq!(got, vec![
            (1, vec!["a".into(), "b \"q\"".into()]),
            (2, vec!["x\ny".into(), "2".into()]),
            (4, vec!["3".into(), "".into()]),
        ]);
    }

    #[test]
    fn delimiters_are_found() {
        assert_eq!(sniff_delimiter("a;b;c\n1,5;2;3\n4;5,5;6\n"), b';');
        assert_eq!(sniff_delimiter("a\tb\n1\t2\n"), b'\t');
        assert_eq!(sniff_delimiter("a|b|c\n1|2|3\n"), b'|');
        assert_eq!(sniff_delimiter("a,b\n\"1,5\",2\n"), b',');
        assert_eq!(sniff_delimiter("single\n1\n2\n"), b',');
    }

    #[test]
    fn decoding_falls_back_to_windows_1252() {
        let (s, e) = decode(b"name\nZ\xfcrich\n").unwrap();
        assert_eq!((s.as_ref(), e), ("name\nZürich\n", Encoding::Windows1252));
        let (s, e) = decode("\u{feff}a,b".as_bytes()).unwrap();
        assert_eq!((s.as_ref(), e), ("a,b", Encoding::Utf8Bom));
        assert!(matches!(decode(b"PK\x03\x04\x00\x00"), Err(ReadError::NotText { offset: 4 })));
    }
}
