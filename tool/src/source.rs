//! The design file as text: read with a size limit, decoded as UTF-8, and byte offsets turned
//! into lines and columns for messages.

use toml::de::DeTable;

use crate::error::{ErrorClass, Place, ToolError};

/// The largest design file read, bytes (1 MiB; the examples are under 3 KiB). A larger input —
/// `/dev/zero`, a log file given by mistake — is refused after reading this much, never read
/// until memory runs out.
pub const MAX_FILE_BYTES: u64 = 1 << 20;

/// Reads the design file at `path`: at most [`MAX_FILE_BYTES`], UTF-8.
///
/// # Errors
/// [`ErrorClass::Io`] when it cannot be read or is larger; [`ErrorClass::Syntax`] at the line,
/// column and byte offset of the first byte that is not UTF-8.
pub fn read(path: &str) -> Result<String, ToolError> {
    use std::io::Read as _;
    let mut bytes = Vec::new();
    std::fs::File::open(path)
        .and_then(|f| f.take(MAX_FILE_BYTES + 1).read_to_end(&mut bytes))
        .map_err(|e| ToolError::io(path, "read", &e))?;
    decode(path, bytes)
}

/// The contents of the design file `path` from its bytes: at most [`MAX_FILE_BYTES`], UTF-8.
///
/// # Errors
/// As [`read`].
pub fn decode(path: &str, bytes: Vec<u8>) -> Result<String, ToolError> {
    if bytes.len() as u64 > MAX_FILE_BYTES {
        return Err(ToolError::new(
            ErrorClass::Io,
            format!(
                "`{path}` is larger than {} bytes (1 MiB), the most a design file may hold",
                MAX_FILE_BYTES
            ),
        )
        .hint("a design file is a few kilobytes of TOML; check the file name"));
    }
    String::from_utf8(bytes).map_err(|e| {
        let at = e.utf8_error().valid_up_to();
        let valid = std::str::from_utf8(&e.as_bytes()[..at]).unwrap_or_default();
        let (line, column) = line_col(valid, at);
        ToolError::new(
            ErrorClass::Syntax,
            format!("not valid TOML: not UTF-8 text (byte offset {at} is not part of a UTF-8 character)"),
        )
        .at(
            Some(Place::File {
                path: path.to_string(),
                line,
                column,
            }),
            None,
        )
        .hint("save the file as UTF-8")
    })
}

/// 1-based line and character column of byte offset `at` in `text`.
pub(crate) fn line_col(text: &str, at: usize) -> (usize, usize) {
    Lines::new(text).line_col(at)
}

/// Line and column lookup in one text, fast for many lookups: the line starts are found once,
/// and a lookup further along the same line counts on from the one before (a 1 MiB one-line
/// array of 100 000 items is placed in linear time, not quadratic).
pub(crate) struct Lines<'a> {
    text: &'a str,
    /// Byte offset of the start of each line.
    starts: Vec<usize>,
    /// The last lookup: (byte offset, line index, column).
    last: std::cell::Cell<(usize, usize, usize)>,
}

impl<'a> Lines<'a> {
    pub(crate) fn new(text: &'a str) -> Self {
        let starts = std::iter::once(0)
            .chain(text.match_indices('\n').map(|(i, _)| i + 1))
            .collect();
        Self {
            text,
            starts,
            last: std::cell::Cell::new((0, 0, 1)),
        }
    }

    /// 1-based line and character column of byte offset `at`.
    pub(crate) fn line_col(&self, at: usize) -> (usize, usize) {
        let mut at = at.min(self.text.len());
        while !self.text.is_char_boundary(at) {
            at -= 1;
        }
        let line = self.starts.partition_point(|&s| s <= at) - 1;
        let (last_at, last_line, last_col) = self.last.get();
        let column = if last_line == line && last_at <= at {
            last_col + self.text[last_at..at].chars().count()
        } else {
            self.text[self.starts[line]..at].chars().count() + 1
        };
        self.last.set((at, line, column));
        (line + 1, column)
    }
}

/// The byte offset of the start of the first line at which `text` already fails to parse with
/// `message` and no span: the smallest prefix of whole lines that fails that way, found by
/// bisection (about 20 parses of a 1 MiB file). Start of the file when no prefix does.
pub(crate) fn first_failing_line(text: &str, message: &str) -> usize {
    let ends: Vec<usize> = text
        .match_indices('\n')
        .map(|(i, _)| i + 1)
        .chain(std::iter::once(text.len()))
        .collect();
    let fails = |k: usize| {
        DeTable::parse(&text[..ends[k]])
            .err()
            .is_some_and(|e| e.span().is_none() && e.message() == message)
    };
    let (mut lo, mut hi) = (0, ends.len() - 1);
    if !fails(hi) {
        return 0;
    }
    while lo < hi {
        let mid = lo + (hi - lo) / 2;
        if fails(mid) {
            hi = mid;
        } else {
            lo = mid + 1;
        }
    }
    if lo == 0 {
        0
    } else {
        ends[lo - 1]
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn lines_and_columns() {
        let t = "a\nbc = 1\n  µd = 2\n";
        assert_eq!(line_col(t, 0), (1, 1));
        assert_eq!(line_col(t, 2), (2, 1));
        assert_eq!(line_col(t, 7), (2, 6));
        // `µ` is two bytes but one column.
        let at = t.find('d').unwrap();
        assert_eq!(line_col(t, at), (3, 4));
        // Lookups in any order agree with lookups from scratch.
        let lines = Lines::new(t);
        for at in [7, 2, 9, 0, 12, 11, 3, 100] {
            let at = at.min(t.len());
            assert_eq!(lines.line_col(at), line_col(t, at), "{at}");
        }
    }

    #[test]
    fn a_spanless_error_is_placed_at_the_line_that_causes_it() {
        let deep = vec!["a"; 200].join(".");
        let text = format!("[design]\nname = \"x\"\n\n[{deep}]\nb = 1\n");
        let e = DeTable::parse(&text).unwrap_err();
        assert!(e.span().is_none(), "the parser now gives a span: {e}");
        let at = first_failing_line(&text, e.message());
        assert_eq!(line_col(&text, at), (4, 1));
    }
}
