/// Maps byte offsets to lines and columns.
///
/// The CLI shows 1-based lines and columns counted in characters; the language
/// server needs 0-based UTF-16 columns. Both come from here so they cannot disagree.
#[derive(Clone, Debug)]
pub struct LineIndex {
    /// Byte offset of the start of each line.
    line_starts: Vec<usize>,
    len: usize,
}

/// A 0-based line and a 0-based column in the unit the caller asked for.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct LineCol {
    pub line: usize,
    pub col: usize,
}

impl LineIndex {
    pub fn new(text: &str) -> Self {
        let mut line_starts = vec![0];
        for (i, b) in text.bytes().enumerate() {
            if b == b'\n' {
                line_starts.push(i + 1);
            }
        }
        LineIndex {
            line_starts,
            len: text.len(),
        }
    }

    /// 0-based line of a byte offset (offsets past the end map to the last line).
    pub fn line_of(&self, offset: usize) -> usize {
        let offset = offset.min(self.len);
        match self.line_starts.binary_search(&offset) {
            Ok(l) => l,
            Err(l) => l - 1,
        }
    }

    pub fn line_start(&self, line: usize) -> usize {
        self.line_starts.get(line).copied().unwrap_or(self.len)
    }

    pub fn line_count(&self) -> usize {
        self.line_starts.len()
    }

    /// 0-based line and column counted in Unicode scalar values.
    pub fn char_pos(&self, text: &str, offset: usize) -> LineCol {
        let offset = floor_char_boundary(text, offset.min(text.len()));
        let line = self.line_of(offset);
        let start = self.line_start(line);
        LineCol {
            line,
            col: text[start..offset].chars().count(),
        }
    }

    /// 0-based line and column counted in UTF-16 code units (the protocol default).
    pub fn utf16_pos(&self, text: &str, offset: usize) -> LineCol {
        let offset = floor_char_boundary(text, offset.min(text.len()));
        let line = self.line_of(offset);
        let start = self.line_start(line);
        LineCol {
            line,
            col: text[start..offset].chars().map(char::len_utf16).sum(),
        }
    }

    /// Byte offset of a 0-based line and UTF-16 column; columns past the end of
    /// the line clamp to its end, lines past the end clamp to the end of the text.
    pub fn offset_of_utf16(&self, text: &str, pos: LineCol) -> usize {
        if pos.line >= self.line_starts.len() {
            return text.len();
        }
        let start = self.line_starts[pos.line];
        let end = self
            .line_starts
            .get(pos.line + 1)
            .map(|e| e - 1)
            .unwrap_or(text.len());
        let mut units = 0;
        for (i, c) in text[start..end].char_indices() {
            if units >= pos.col {
                return start + i;
            }
            units += c.len_utf16();
        }
        end
    }
}

fn floor_char_boundary(text: &str, mut offset: usize) -> usize {
    while offset > 0 && !text.is_char_boundary(offset) {
        offset -= 1;
    }
    offset
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn utf16_columns_count_surrogate_pairs() {
        let text = "a\n`größe` 😀x\n";
        let idx = LineIndex::new(text);
        let x = text.find('x').unwrap();
        assert_eq!(idx.char_pos(text, x), LineCol { line: 1, col: 9 });
        assert_eq!(idx.utf16_pos(text, x), LineCol { line: 1, col: 10 });
        assert_eq!(idx.offset_of_utf16(text, LineCol { line: 1, col: 10 }), x);
    }
}
