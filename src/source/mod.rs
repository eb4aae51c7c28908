//! Source files, byte spans and line indexes: the front end of the pipeline.
//!
//! Every value the program reads remembers the file it came from and the byte range it
//! occupies there ([`Span`]). Lines and columns are computed only when a finding is
//! rendered, from the per-file [`LineIndex`].

pub mod yaml;

use std::path::{Path, PathBuf};

/// Index of a file in [`Sources`].
pub type FileId = u32;

/// A byte range in one source file.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub struct Span {
    /// The file the range belongs to.
    pub file: FileId,
    /// First byte.
    pub start: u32,
    /// One past the last byte.
    pub end: u32,
}

impl Span {
    /// A span from `start` to `end` in `file`.
    pub fn new(file: FileId, start: usize, end: usize) -> Self {
        let start = u32::try_from(start).unwrap_or(u32::MAX);
        let end = u32::try_from(end).unwrap_or(u32::MAX).max(start);
        Span { file, start, end }
    }

    /// An empty span at `at`.
    pub fn point(file: FileId, at: usize) -> Self {
        Span::new(file, at, at)
    }

    /// Whether `other` lies within this span (same file).
    pub fn contains(&self, other: &Span) -> bool {
        self.file == other.file && self.start <= other.start && other.end <= self.end
    }

    /// The smallest span covering both (same file assumed; otherwise `self`).
    pub fn join(&self, other: &Span) -> Span {
        if self.file != other.file {
            return *self;
        }
        Span {
            file: self.file,
            start: self.start.min(other.start),
            end: self.end.max(other.end),
        }
    }

    /// Length in bytes.
    pub fn len(&self) -> usize {
        (self.end - self.start) as usize
    }

    /// Whether the span is empty.
    pub fn is_empty(&self) -> bool {
        self.end == self.start
    }
}

/// Line starts of a text, for turning byte offsets into 1-based line and column.
#[derive(Debug, Clone)]
pub struct LineIndex {
    starts: Vec<usize>,
}

impl LineIndex {
    /// Index the lines of `text`. A line ends at a line feed, a carriage return and
    /// line feed, or a lone carriage return (as YAML reads them).
    pub fn new(text: &str) -> Self {
        let bytes = text.as_bytes();
        let mut starts = vec![0];
        starts.extend(
            bytes
                .iter()
                .enumerate()
                .filter(|&(i, &b)| b == b'\n' || (b == b'\r' && bytes.get(i + 1) != Some(&b'\n')))
                .map(|(i, _)| i + 1),
        );
        LineIndex { starts }
    }

    /// Where line `line` (0-based) starts for counting columns: a byte-order mark at the
    /// start of the file is not a column.
    fn column_start(&self, text: &str, line: usize) -> usize {
        let start = self.starts[line];
        if line == 0 && text.starts_with('\u{feff}') {
            start + '\u{feff}'.len_utf8()
        } else {
            start
        }
    }

    /// 1-based line and 1-based column (in characters) of byte `offset` in `text`.
    pub fn line_col(&self, text: &str, offset: usize) -> (usize, usize) {
        let offset = offset.min(text.len());
        let line = self.starts.partition_point(|&s| s <= offset) - 1;
        let start = self
            .column_start(text, line)
            .min(offset.max(self.starts[line]));
        let mut end = offset.max(start);
        while end > start && !text.is_char_boundary(end) {
            end -= 1;
        }
        let col = text[start..end].chars().count() + 1;
        (line + 1, col)
    }

    /// Byte offset of 1-based `line` and 1-based character `column`, clamped to the text.
    pub fn offset(&self, text: &str, line: usize, column: usize) -> usize {
        let Some(index) = line.checked_sub(1).filter(|&l| l < self.starts.len()) else {
            return if line == 0 { 0 } else { text.len() };
        };
        let start = self.column_start(text, index);
        let rest = &text[start..];
        let line_len = rest.find(['\n', '\r']).unwrap_or(rest.len());
        rest[..line_len]
            .char_indices()
            .nth(column.saturating_sub(1))
            .map(|(i, _)| start + i)
            .unwrap_or(start + line_len)
    }

    /// Number of lines.
    pub fn lines(&self) -> usize {
        self.starts.len()
    }
}

/// Whether a character is shown escaped: C0 controls except tab and line feed, DEL and
/// the C1 controls (ESC starts terminal sequences; BEL, backspace and carriage return
/// move or sound; C1 includes a one-byte CSI).
pub fn is_hidden_control(c: char) -> bool {
    (c < ' ' && c != '\t' && c != '\n') || ('\u{7f}'..='\u{9f}').contains(&c)
}

/// Text from the input (a value, a comment, a file name) made safe to show: every
/// control character of [`is_hidden_control`] is written as `\u{1b}`. The one escaping
/// function of every renderer (human, JSON, SARIF, Markdown).
pub fn escape_control(s: &str) -> std::borrow::Cow<'_, str> {
    if !s.chars().any(is_hidden_control) {
        return std::borrow::Cow::Borrowed(s);
    }
    let mut out = String::with_capacity(s.len() + 8);
    for c in s.chars() {
        if is_hidden_control(c) {
            out.push_str(&format!("\\u{{{:x}}}", c as u32));
        } else {
            out.push(c);
        }
    }
    std::borrow::Cow::Owned(out)
}

/// A source excerpt made safe to show, with the map between its offsets and the
/// original's. Control characters are escaped as by [`escape_control`], except that a
/// carriage return ending a line (alone, or before a line feed) stays a line break: a
/// lone one becomes a line feed, as YAML reads it.
#[derive(Debug, Clone)]
pub struct Excerpt {
    /// The escaped text.
    pub text: String,
    /// (original offset, escaped offset) at each escaped character, in order.
    map: Vec<(usize, usize)>,
}

impl Excerpt {
    /// The excerpt of `window`, or `None` when it shows as it is.
    pub fn of(window: &str) -> Option<Excerpt> {
        let bytes = window.as_bytes();
        let hidden = |i: usize, c: char| {
            c == '\r' && bytes.get(i + 1) != Some(&b'\n') || (c != '\r' && is_hidden_control(c))
        };
        if !window.char_indices().any(|(i, c)| hidden(i, c)) {
            return None;
        }
        let mut text = String::with_capacity(window.len() + 16);
        let mut map = Vec::new();
        for (i, c) in window.char_indices() {
            if c == '\r' && bytes.get(i + 1) != Some(&b'\n') {
                text.push('\n');
            } else if c != '\r' && is_hidden_control(c) {
                map.push((i, text.len()));
                text.push_str(&format!("\\u{{{:x}}}", c as u32));
                map.push((i + c.len_utf8(), text.len()));
            } else {
                text.push(c);
            }
        }
        Some(Excerpt { text, map })
    }

    /// The escaped offset of an original offset.
    pub fn escaped(&self, original: usize) -> usize {
        match self.map.iter().rev().find(|(o, _)| *o <= original) {
            Some((o, e)) => e + (original - o),
            None => original,
        }
    }

    /// The original offset of an escaped offset (inside an escape: its character).
    pub fn original(&self, escaped: usize) -> usize {
        // Entries come in pairs: the start and the end of one escape.
        match self.map.iter().rposition(|(_, e)| *e <= escaped) {
            Some(i) if i % 2 == 0 && escaped < self.map[i + 1].1 => self.map[i].0,
            Some(i) => self.map[i].0 + (escaped - self.map[i].1),
            None => escaped,
        }
    }
}

/// Why a path that is not a regular file cannot be read: "is a directory, not a regular
/// file", "is a named pipe (FIFO), not a regular file" …
pub fn not_regular_file(meta: &std::fs::Metadata) -> String {
    let t = meta.file_type();
    if t.is_dir() {
        return "is a directory, not a regular file".to_string();
    }
    #[cfg(unix)]
    {
        use std::os::unix::fs::FileTypeExt;
        if t.is_fifo() {
            return "is a named pipe (FIFO), not a regular file".to_string();
        }
        if t.is_socket() {
            return "is a socket, not a regular file".to_string();
        }
        if t.is_char_device() || t.is_block_device() {
            return "is a device, not a regular file".to_string();
        }
    }
    "not a regular file".to_string()
}

/// One loaded file.
#[derive(Debug)]
pub struct SourceFile {
    /// Its id in [`Sources`].
    pub id: FileId,
    /// The path used to open it.
    pub path: PathBuf,
    /// The path as shown to the user (relative stays relative).
    pub display: String,
    /// The text (lossily decoded when the file is not UTF-8; a finding says so).
    pub text: String,
    /// Line starts.
    pub lines: LineIndex,
}

impl SourceFile {
    /// 1-based line and column of a byte offset.
    pub fn line_col(&self, offset: u32) -> (usize, usize) {
        self.lines.line_col(&self.text, offset as usize)
    }

    /// The text a span covers.
    pub fn slice(&self, span: Span) -> &str {
        self.text
            .get(span.start as usize..span.end as usize)
            .unwrap_or("")
    }
}

/// All files read in one run; spans refer into it by [`FileId`]. Cloning is cheap (the
/// files are shared): a thread takes a snapshot to render from without holding a lock.
#[derive(Debug, Default, Clone)]
pub struct Sources {
    files: Vec<std::sync::Arc<SourceFile>>,
}

impl Sources {
    /// An empty set.
    pub fn new() -> Self {
        Sources::default()
    }

    /// Add a file's text and return its id.
    pub fn add(&mut self, path: &Path, display: String, text: String) -> FileId {
        let id = FileId::try_from(self.files.len()).expect("fewer than 2^32 files");
        let lines = LineIndex::new(&text);
        self.files.push(std::sync::Arc::new(SourceFile {
            id,
            path: path.to_path_buf(),
            display,
            text,
            lines,
        }));
        id
    }

    /// Drop a file's text and line index once nothing will be rendered from it (a clean
    /// rig in a large campaign), so memory follows the largest file, not the campaign.
    /// Its id, path and display name stay.
    pub fn release_text(&mut self, id: FileId) {
        if let Some(f) = self.files.get_mut(id as usize) {
            *f = std::sync::Arc::new(SourceFile {
                id: f.id,
                path: f.path.clone(),
                display: f.display.clone(),
                text: String::new(),
                lines: LineIndex::new(""),
            });
        }
    }

    /// The file with this id.
    pub fn get(&self, id: FileId) -> &SourceFile {
        &self.files[id as usize]
    }

    /// The file with this id, shared (to read it without holding whatever guards the
    /// set).
    pub fn shared(&self, id: FileId) -> std::sync::Arc<SourceFile> {
        self.files[id as usize].clone()
    }

    /// All files, in the order they were added.
    pub fn iter(&self) -> impl Iterator<Item = &SourceFile> {
        self.files.iter().map(|f| &**f)
    }

    /// Number of files.
    pub fn len(&self) -> usize {
        self.files.len()
    }

    /// Whether no file was added.
    pub fn is_empty(&self) -> bool {
        self.files.is_empty()
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn line_col_counts_characters_not_bytes() {
        let text = "a: 1\nµs: 2\n";
        let idx = LineIndex::new(text);
        assert_eq!(idx.line_col(text, 0), (1, 1));
        assert_eq!(idx.line_col(text, 5), (2, 1));
        // byte 7 is after the two-byte µ and the s: column 3 in characters
        assert_eq!(idx.line_col(text, 8), (2, 3));
        assert_eq!(idx.offset(text, 2, 3), 8);
    }

    #[test]
    fn byte_order_mark_is_not_a_column() {
        // Regression: with a UTF-8 BOM, `format: 2` was placed at 1:10 (right: 1:9).
        let text = "\u{feff}format: 2\nrig: a\n";
        let idx = LineIndex::new(text);
        let two = text.find('2').unwrap();
        assert_eq!(idx.line_col(text, two), (1, 9));
        assert_eq!(idx.offset(text, 1, 9), two);
        assert_eq!(idx.line_col(text, 0), (1, 1));
        assert_eq!(idx.line_col(text, text.find("rig").unwrap()), (2, 1));
    }

    #[test]
    fn lone_carriage_return_ends_a_line() {
        // Regression: with lone-CR line endings everything was on line 1 (JSON said
        // 1:104 where the human header said 8:104; right: 8:12).
        let text = "a: 1\rb: 2\r\nc: 3\nd: 4";
        let idx = LineIndex::new(text);
        assert_eq!(idx.lines(), 4);
        assert_eq!(idx.line_col(text, text.find('b').unwrap()), (2, 1));
        assert_eq!(idx.line_col(text, text.find('c').unwrap()), (3, 1));
        assert_eq!(idx.line_col(text, text.find('4').unwrap()), (4, 4));
        assert_eq!(idx.offset(text, 2, 4), text.find('2').unwrap());
    }
}
