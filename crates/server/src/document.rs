//! An open document: its text, version and line index, kept equal to the
//! editor's text through incremental changes.

use syntax::{LineCol, LineIndex};

/// The server's copy of one editor buffer.
#[derive(Clone, Debug)]
pub struct Document {
    pub version: i32,
    pub text: String,
    pub index: LineIndex,
}

/// One change as the protocol sends it, in editor terms: a UTF-16 range, or
/// `None` for "replace the whole text".
#[derive(Clone, Debug)]
pub struct Change {
    pub range: Option<(LineCol, LineCol)>,
    pub text: String,
}

impl Document {
    pub fn new(version: i32, text: String) -> Self {
        let index = LineIndex::new(&text);
        Document {
            version,
            text,
            index,
        }
    }

    /// Apply changes in order, as the protocol requires: each range refers to
    /// the text left by the previous change. Positions past a line's end or the
    /// text's end clamp (editors do send those); a reversed range is taken in
    /// order, so no input can make the text unreadable.
    pub fn apply(&mut self, version: i32, changes: &[Change]) {
        for c in changes {
            match c.range {
                None => self.text = c.text.clone(),
                Some((a, b)) => {
                    let mut start = self.index.offset_of_utf16(&self.text, a);
                    let mut end = self.index.offset_of_utf16(&self.text, b);
                    if end < start {
                        std::mem::swap(&mut start, &mut end);
                    }
                    self.text.replace_range(start..end, &c.text);
                }
            }
            self.index = LineIndex::new(&self.text);
        }
        self.version = version;
    }

    pub fn offset(&self, pos: LineCol) -> usize {
        self.index.offset_of_utf16(&self.text, pos)
    }

    pub fn position(&self, offset: usize) -> LineCol {
        self.index.utf16_pos(&self.text, offset)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn lc(line: usize, col: usize) -> LineCol {
        LineCol { line, col }
    }

    #[test]
    fn edits_count_utf16_units() {
        // "😀" is two UTF-16 units, "ö" one; the edit lands after them.
        let mut d = Document::new(0, "let größe😀 = x\n".into());
        d.apply(
            1,
            &[Change {
                range: Some((lc(0, 11), lc(0, 11))),
                text: "_b".into(),
            }],
        );
        assert_eq!(d.text, "let größe😀_b = x\n");
        d.apply(
            2,
            &[Change {
                range: Some((lc(0, 4), lc(0, 13))),
                text: "y".into(),
            }],
        );
        assert_eq!(d.text, "let y = x\n");
        assert_eq!(d.version, 2);
    }

    #[test]
    fn positions_past_the_end_clamp() {
        let mut d = Document::new(0, "ab\ncd".into());
        d.apply(
            1,
            &[Change {
                range: Some((lc(0, 99), lc(7, 0))),
                text: "!".into(),
            }],
        );
        assert_eq!(d.text, "ab!");
    }
}
