//! Source files with a line index.
//!
//! Every span in armature is a byte range into one `SourceFile`. Line and
//! column are computed through the line index (binary search), never by
//! rescanning from the start of the text.

use std::path::{Path, PathBuf};
use std::sync::{Arc, OnceLock};

/// A byte range into a source file. Stored in 32 bits a side (every
/// input is capped far below 4 GiB; an offset beyond saturates), which
/// halves the size of the millions of spans a big netlist carries.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub struct Span {
    start: u32,
    end: u32,
}

fn offset32(x: usize) -> u32 {
    u32::try_from(x).unwrap_or(u32::MAX)
}

impl Span {
    pub fn new(start: usize, end: usize) -> Span {
        Span {
            start: offset32(start),
            end: offset32(end),
        }
    }
    pub fn start(&self) -> usize {
        self.start as usize
    }
    pub fn end(&self) -> usize {
        self.end as usize
    }
    pub fn len(&self) -> usize {
        self.end().saturating_sub(self.start())
    }
    pub fn is_empty(&self) -> bool {
        self.len() == 0
    }
    pub fn join(self, other: Span) -> Span {
        Span {
            start: self.start.min(other.start),
            end: self.end.max(other.end),
        }
    }
}

/// A file's text, its display name and the byte offset of each line start.
#[derive(Debug)]
pub struct SourceFile {
    /// The name shown to users (the path as given, or relative).
    pub name: String,
    /// The path used to resolve relative `library` lines.
    pub path: PathBuf,
    pub text: String,
    line_starts: Vec<usize>,
    /// The text with terminal controls escaped, built on first need.
    terminal: OnceLock<Option<Escaped>>,
}

/// A file's text with every character a terminal would act on written
/// as `\u{…}`, and where each escape moved the offsets after it.
#[derive(Debug)]
pub struct Escaped {
    pub file: Arc<SourceFile>,
    /// (original offset of an escaped character, total growth up to and
    /// including it), ascending.
    shifts: Vec<(usize, usize)>,
}

impl Escaped {
    /// The escaped file's offset of an original offset.
    pub fn map(&self, offset: usize) -> usize {
        let k = self.shifts.partition_point(|&(at, _)| at < offset);
        match k.checked_sub(1).and_then(|i| self.shifts.get(i)) {
            Some(&(_, grow)) => offset + grow,
            None => offset,
        }
    }
    pub fn span(&self, s: Span) -> Span {
        Span::new(self.map(s.start()), self.map(s.end()))
    }
}

impl SourceFile {
    pub fn new(name: impl Into<String>, path: impl Into<PathBuf>, text: String) -> Arc<SourceFile> {
        let mut line_starts = Vec::with_capacity(text.len() / 40 + 1);
        line_starts.push(0);
        for (i, b) in text.bytes().enumerate() {
            if b == b'\n' {
                line_starts.push(i + 1);
            }
        }
        Arc::new(SourceFile {
            name: name.into(),
            path: path.into(),
            text,
            line_starts,
            terminal: OnceLock::new(),
        })
    }

    /// The file as a terminal may show it: `None` when nothing in it needs
    /// escaping (the usual case), else the escaped copy and its offset map.
    /// A CR before LF is a line ending, not a control.
    pub fn for_terminal(&self) -> Option<&Escaped> {
        self.terminal
            .get_or_init(|| {
                let t = &self.text;
                let mut chars = t.char_indices().peekable();
                let mut out: Option<String> = None;
                let mut shifts = Vec::new();
                let mut grow = 0usize;
                let mut last = 0usize;
                while let Some((i, c)) = chars.next() {
                    let crlf = c == '\r' && matches!(chars.peek(), Some((_, '\n')));
                    if crlf || !crate::trust::unsafe_char(c) {
                        continue;
                    }
                    let o = out.get_or_insert_with(|| String::with_capacity(t.len() + 16));
                    o.push_str(t.get(last..i).unwrap_or(""));
                    let e = format!("\\u{{{:x}}}", c as u32);
                    grow += e.len() - c.len_utf8();
                    o.push_str(&e);
                    last = i + c.len_utf8();
                    shifts.push((i, grow));
                }
                let name = crate::trust::escape(&self.name);
                let o = match out {
                    Some(mut o) => {
                        o.push_str(t.get(last..).unwrap_or(""));
                        o
                    }
                    None if matches!(name, std::borrow::Cow::Owned(_)) => t.clone(),
                    None => return None,
                };
                let name = name.into_owned();
                Some(Escaped {
                    file: SourceFile::new(name, self.path.clone(), o),
                    shifts,
                })
            })
            .as_ref()
    }

    /// A file built from a string, for tests and library callers.
    pub fn from_str(name: &str, text: &str) -> Arc<SourceFile> {
        SourceFile::new(name, Path::new(name), text.to_string())
    }

    pub fn line_count(&self) -> usize {
        self.line_starts.len()
    }

    /// Zero-based line index of a byte offset.
    pub fn line_index(&self, offset: usize) -> usize {
        match self.line_starts.binary_search(&offset) {
            Ok(i) => i,
            Err(i) => i.saturating_sub(1),
        }
    }

    /// Byte offset where a zero-based line starts.
    pub fn line_start(&self, line: usize) -> usize {
        self.line_starts
            .get(line)
            .copied()
            .unwrap_or(self.text.len())
    }

    /// Byte offset just past the end of a zero-based line (before `\n`).
    pub fn line_end(&self, line: usize) -> usize {
        match self.line_starts.get(line + 1) {
            Some(&next) => next.saturating_sub(1),
            None => self.text.len(),
        }
    }

    /// One-based line and column (in Unicode code points) of a byte offset.
    pub fn line_col(&self, offset: usize) -> (usize, usize) {
        let offset = offset.min(self.text.len());
        let line = self.line_index(offset);
        let start = self.line_start(line);
        let col = self
            .text
            .get(start..offset)
            .map(|s| s.chars().count())
            .unwrap_or(offset - start);
        (line + 1, col + 1)
    }

    /// The text of a span, or "" if the span is out of range.
    pub fn slice(&self, span: Span) -> &str {
        self.text.get(span.start()..span.end()).unwrap_or("")
    }

    /// The text of the zero-based line, without its line break.
    pub fn line_text(&self, line: usize) -> &str {
        let s = self.line_start(line);
        let e = self.line_end(line);
        self.text.get(s..e).unwrap_or("").trim_end_matches('\r')
    }
}
