//! A forgiving word-level scan of the text, for what the tree cannot tell:
//! the words before the cursor while the statement is still being typed, and
//! the keywords and literals that semantic tokens colour.

/// What a piece of text is.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Piece {
    /// An identifier or keyword; `quoted` for a backtick name.
    Word {
        quoted: bool,
    },
    Str,
    Num,
    Punct(char),
    Comment,
}

#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct Tok {
    pub piece: Piece,
    pub start: usize,
    pub end: usize,
}

impl Tok {
    pub fn text<'a>(&self, text: &'a str) -> &'a str {
        &text[self.start..self.end]
    }

    /// The word without backticks, or `None` for a piece that is not a word.
    pub fn word<'a>(&self, text: &'a str) -> Option<&'a str> {
        match self.piece {
            Piece::Word { quoted: false } => Some(self.text(text)),
            Piece::Word { quoted: true } => {
                let t = self.text(text);
                let t = t.strip_prefix('`').unwrap_or(t);
                Some(t.strip_suffix('`').unwrap_or(t))
            }
            _ => None,
        }
    }
}

pub fn is_word_start(c: char) -> bool {
    c.is_alphabetic() || c == '_'
}

pub fn is_word_char(c: char) -> bool {
    c.is_alphanumeric() || c == '_' || c == '.'
}

/// Scan the whole text. Unclosed strings and backtick names run to the end
/// of their line, so one typo does not swallow the rest of the file.
pub fn scan(text: &str) -> Vec<Tok> {
    let mut out = Vec::new();
    let mut it = text.char_indices().peekable();
    while let Some((i, c)) = it.next() {
        let piece;
        let mut end = i + c.len_utf8();
        if c.is_whitespace() {
            continue;
        } else if c == '#' {
            while let Some(&(j, d)) = it.peek() {
                if d == '\n' {
                    break;
                }
                end = j + d.len_utf8();
                it.next();
            }
            piece = Piece::Comment;
        } else if c == '"' || c == '`' {
            let mut escaped = false;
            while let Some(&(j, d)) = it.peek() {
                if d == '\n' {
                    break;
                }
                it.next();
                end = j + d.len_utf8();
                if c == '"' && d == '\\' && !escaped {
                    escaped = true;
                    continue;
                }
                if d == c && !escaped {
                    break;
                }
                escaped = false;
            }
            piece = if c == '"' {
                Piece::Str
            } else {
                Piece::Word { quoted: true }
            };
        } else if c.is_ascii_digit() {
            while let Some(&(j, d)) = it.peek() {
                if d.is_ascii_alphanumeric() || d == '.' {
                    end = j + d.len_utf8();
                    it.next();
                } else {
                    break;
                }
            }
            piece = Piece::Num;
        } else if is_word_start(c) {
            while let Some(&(j, d)) = it.peek() {
                if is_word_char(d) {
                    end = j + d.len_utf8();
                    it.next();
                } else {
                    break;
                }
            }
            piece = Piece::Word { quoted: false };
        } else {
            piece = Piece::Punct(c);
        }
        out.push(Tok {
            piece,
            start: i,
            end,
        });
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn words_strings_and_comments() {
        let text = "let größe = `team size` + 1sd # note\nsource \"a.csv";
        let kinds: Vec<(Piece, &str)> =
            scan(text).iter().map(|t| (t.piece, t.text(text))).collect();
        assert_eq!(
            kinds,
            vec![
                (Piece::Word { quoted: false }, "let"),
                (Piece::Word { quoted: false }, "größe"),
                (Piece::Punct('='), "="),
                (Piece::Word { quoted: true }, "`team size`"),
                (Piece::Punct('+'), "+"),
                (Piece::Num, "1sd"),
                (Piece::Comment, "# note"),
                (Piece::Word { quoted: false }, "source"),
                (Piece::Str, "\"a.csv"),
            ]
        );
    }
}
