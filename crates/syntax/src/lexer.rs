//! Turns source text into tokens, comments and lexical errors.
//!
//! Every word becomes a [`Token::Word`]: keywords are only keywords where a
//! statement begins, and that is the parser's business. Lexing never fails: a
//! character that cannot start a token becomes [`Token::Bad`] (and an error), so
//! the parser can resynchronise around it instead of seeing a silently closed gap.

use chumsky::prelude::*;

use crate::ast::Comment;
use crate::{Span, SyntaxError};

#[derive(Clone, Debug, PartialEq)]
pub(crate) enum Token {
    /// A bare identifier, keyword or word operator (`and`, `or`, `not`).
    Word(String),
    /// A statement or model keyword at the beginning of a line: always a
    /// keyword there, never a name. Made by the parser, not the lexer.
    Kw(String),
    /// A backtick-quoted name, never a keyword.
    Quoted(String),
    /// A string literal with escapes resolved.
    Str(String),
    /// A number literal as written.
    Num(String),
    /// A number immediately followed by letters: `1sd`, `0.5sd`. Kept as one
    /// token so that `at -1sd` cannot be confused with `at -1 sd`.
    NumUnit(String, String),
    P(Punct),
    /// Characters that cannot start a token; the lexer already reported them.
    Bad(String),
    /// Stands in for parentheses nested too deeply to parse; already reported.
    Deep,
}

#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub(crate) enum Punct {
    Eq,
    Plus,
    Minus,
    Star,
    Slash,
    Caret,
    LParen,
    RParen,
    LBrace,
    RBrace,
    Comma,
    Colon,
    Lt,
    Gt,
    Le,
    Ge,
    EqEq,
    Ne,
    Dot,
}

impl Punct {
    pub(crate) fn text(self) -> &'static str {
        match self {
            Punct::Eq => "=",
            Punct::Plus => "+",
            Punct::Minus => "-",
            Punct::Star => "*",
            Punct::Slash => "/",
            Punct::Caret => "^",
            Punct::LParen => "(",
            Punct::RParen => ")",
            Punct::LBrace => "{",
            Punct::RBrace => "}",
            Punct::Comma => ",",
            Punct::Colon => ":",
            Punct::Lt => "<",
            Punct::Gt => ">",
            Punct::Le => "<=",
            Punct::Ge => ">=",
            Punct::EqEq => "==",
            Punct::Ne => "!=",
            Punct::Dot => ".",
        }
    }
}

impl Token {
    /// How the token is shown inside an error message.
    pub(crate) fn describe(&self) -> String {
        fn short(s: &str) -> String {
            if s.chars().count() > 30 {
                let head: String = s.chars().take(27).collect();
                format!("{head}...")
            } else {
                s.to_string()
            }
        }
        match self {
            Token::Word(w) | Token::Kw(w) => format!("`{}`", short(w)),
            Token::Quoted(w) => format!("the name `{}`", short(w)),
            Token::Str(s) => format!("the string \"{}\"", short(s)),
            Token::Num(n) => format!("the number `{}`", short(n)),
            Token::NumUnit(n, u) => format!("`{}{}`", short(n), short(u)),
            Token::P(p) => format!("`{}`", p.text()),
            Token::Bad(s) => format!("`{}`", short(s)),
            Token::Deep => "nested parentheses".to_string(),
        }
    }

    pub(crate) fn is_word(&self, w: &str) -> bool {
        matches!(self, Token::Word(x) if x == w)
    }
}

/// What the lexer produced.
pub(crate) struct Lexed {
    pub tokens: Vec<(Token, Span)>,
    pub comments: Vec<Comment>,
    pub errors: Vec<SyntaxError>,
}

#[derive(Clone, Debug)]
enum Lexeme {
    Tok(Token),
    Comment(String),
    /// A string or name with a problem that was lexed anyway.
    Flawed(Token, String),
}

type LexErr<'src> = extra::Err<Rich<'src, char>>;

fn is_ident_start(c: char) -> bool {
    c.is_alphabetic() || c == '_'
}

fn is_ident_continue(c: char) -> bool {
    c.is_alphanumeric() || c == '_' || c == '.'
}

fn lexer<'src>() -> impl Parser<'src, &'src str, Vec<(Lexeme, SimpleSpan)>, LexErr<'src>> {
    let digits = any()
        .filter(|c: &char| c.is_ascii_digit())
        .repeated()
        .at_least(1);
    let exponent = one_of("eE")
        .then(one_of("+-").or_not())
        .then(digits)
        .or_not();
    let number = choice((
        digits
            .then(just('.').then(digits).or_not())
            .then(exponent)
            .ignored(),
        just('.').then(digits).then(exponent).ignored(),
    ))
    .to_slice();
    let word = any()
        .filter(|c: &char| is_ident_start(*c))
        .then(any().filter(|c: &char| is_ident_continue(*c)).repeated())
        .to_slice();
    let num_tok = number
        .then(word.or_not())
        .map(|(n, unit): (&str, Option<&str>)| match unit {
            Some(u) => Lexeme::Tok(Token::NumUnit(n.to_string(), u.to_string())),
            None => Lexeme::Tok(Token::Num(n.to_string())),
        });
    let word_tok = word.map(|w: &str| Lexeme::Tok(Token::Word(w.to_string())));

    // Escapes resolve to their character; an unknown escape keeps its text and
    // is reported, so one typo does not hide the rest of the string.
    let escape = just('\\').ignore_then(any().or_not()).map(|c| match c {
        Some('"') => Ok('"'),
        Some('\\') => Ok('\\'),
        Some('n') => Ok('\n'),
        Some('t') => Ok('\t'),
        other => Err(other),
    });
    let str_char = choice((escape, none_of("\"\\\n").map(Ok::<char, Option<char>>)));
    let string = just('"')
        .ignore_then(str_char.repeated().collect::<Vec<_>>())
        .then(just('"').or_not())
        .map(|(chars, closed)| {
            let mut value = String::new();
            let mut problem = None;
            for c in chars {
                match c {
                    Ok(c) => value.push(c),
                    Err(c) => {
                        value.push('\\');
                        if let Some(c) = c {
                            value.push(c);
                        }
                        if problem.is_none() {
                            let shown = c.map(String::from).unwrap_or_default();
                            problem = Some(format!(
                                "unknown escape `\\{shown}` in a string; the escapes are `\\\"`, `\\\\`, `\\n` and `\\t`"
                            ));
                        }
                    }
                }
            }
            if closed.is_none() {
                problem = Some(
                    "this string is not closed; add `\"` before the end of the line".to_string(),
                );
            }
            match problem {
                Some(p) => Lexeme::Flawed(Token::Str(value), p),
                None => Lexeme::Tok(Token::Str(value)),
            }
        });

    let quoted = just('`')
        .ignore_then(none_of("`\n").repeated().to_slice())
        .then(just('`').or_not())
        .map(|(name, closed): (&str, Option<char>)| {
            let tok = Token::Quoted(name.to_string());
            if closed.is_none() {
                Lexeme::Flawed(
                    tok,
                    "this name is not closed; add a closing backtick before the end of the line"
                        .to_string(),
                )
            } else if name.trim().is_empty() {
                Lexeme::Flawed(tok, "a name in backticks cannot be empty".to_string())
            } else {
                Lexeme::Tok(tok)
            }
        });

    let comment = just('#')
        .ignore_then(none_of("\n").repeated().to_slice())
        .map(|t: &str| Lexeme::Comment(t.strip_suffix('\r').unwrap_or(t).to_string()));

    let punct = choice((
        just("<=").to(Punct::Le),
        just(">=").to(Punct::Ge),
        just("==").to(Punct::EqEq),
        just("!=").to(Punct::Ne),
        just('=').to(Punct::Eq),
        just('+').to(Punct::Plus),
        just('-').to(Punct::Minus),
        just('*').to(Punct::Star),
        just('/').to(Punct::Slash),
        just('^').to(Punct::Caret),
        just('(').to(Punct::LParen),
        just(')').to(Punct::RParen),
        just('{').to(Punct::LBrace),
        just('}').to(Punct::RBrace),
        just(',').to(Punct::Comma),
        just(':').to(Punct::Colon),
        just('<').to(Punct::Lt),
        just('>').to(Punct::Gt),
        just('.').to(Punct::Dot),
    ))
    .map(|p| Lexeme::Tok(Token::P(p)));

    let bad = any()
        .filter(|c: &char| !c.is_whitespace())
        .map(|c: char| Lexeme::Tok(Token::Bad(c.to_string())));

    let space = any()
        .filter(|c: &char| c.is_whitespace() || *c == '\u{feff}')
        .repeated()
        .boxed();

    space.clone().ignore_then(
        choice((num_tok, word_tok, string, quoted, comment, punct, bad))
            .map_with(|lx, e| (lx, e.span()))
            .then_ignore(space)
            .repeated()
            .collect(),
    )
}

/// A hint for a character that cannot start a token, written for someone who
/// may have used another language's conventions.
fn bad_char_message(text: &str) -> String {
    let first = text.chars().next().unwrap_or(' ');
    let hint = match first {
        '\'' => "; strings are written in double quotes: \"north\"",
        '&' => "; write `and` to combine conditions",
        '|' => "; write `or` to combine conditions",
        '!' => "; write `not` to negate a condition, or `!=` for “not equal”",
        ';' => "; statements need no separator, start each on a new line",
        '~' => "; a model formula is written with `=`: `focus = remote_w + meetings`",
        '[' | ']' => "; only parentheses `( )` group expressions",
        '\u{fffd}' => "; the file is not valid UTF-8 text here",
        _ => "; a column name with such characters is written in backticks: `team size`",
    };
    if text.chars().count() > 1 {
        format!("unexpected characters `{text}`{hint}")
    } else {
        format!("unexpected character `{text}`{hint}")
    }
}

pub(crate) fn lex(text: &str) -> Lexed {
    let (lexemes, errs) = lexer().parse(text).into_output_errors();
    let mut out = Lexed {
        tokens: Vec::new(),
        comments: Vec::new(),
        errors: Vec::new(),
    };
    for e in errs {
        // The lexer accepts every character, so this is only reachable through
        // a defect; report it rather than lose it.
        out.errors.push(SyntaxError {
            span: Span::new(e.span().start, e.span().end),
            message: "the text here could not be read".to_string(),
        });
    }
    for (lx, span) in lexemes.unwrap_or_default() {
        let span = Span::new(span.start, span.end);
        match lx {
            Lexeme::Tok(Token::Bad(c)) => {
                // Runs of bad characters become one token and one error.
                if let Some((Token::Bad(prev), prev_span)) = out.tokens.last_mut() {
                    if prev_span.end == span.start {
                        prev.push_str(&c);
                        prev_span.end = span.end;
                        continue;
                    }
                }
                out.tokens.push((Token::Bad(c), span));
            }
            Lexeme::Tok(t) => out.tokens.push((t, span)),
            Lexeme::Comment(t) => out.comments.push(Comment { text: t, span }),
            Lexeme::Flawed(t, msg) => {
                out.errors.push(SyntaxError { span, message: msg });
                out.tokens.push((t, span));
            }
        }
    }
    for (t, span) in &out.tokens {
        if let Token::Bad(s) = t {
            out.errors.push(SyntaxError {
                span: *span,
                message: bad_char_message(s),
            });
        }
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    fn toks(text: &str) -> Vec<Token> {
        lex(text).tokens.into_iter().map(|(t, _)| t).collect()
    }

    #[test]
    fn numbers_with_units_stay_one_token() {
        assert_eq!(
            toks("-1sd 0.5sd 2 1e-3 .05"),
            vec![
                Token::P(Punct::Minus),
                Token::NumUnit("1".into(), "sd".into()),
                Token::NumUnit("0.5".into(), "sd".into()),
                Token::Num("2".into()),
                Token::Num("1e-3".into()),
                Token::Num(".05".into()),
            ]
        );
    }

    #[test]
    fn unicode_words_and_backticks() {
        assert_eq!(
            toks("años Größe `team size` x.y_1"),
            vec![
                Token::Word("años".into()),
                Token::Word("Größe".into()),
                Token::Quoted("team size".into()),
                Token::Word("x.y_1".into()),
            ]
        );
    }

    #[test]
    fn string_escapes_resolve_and_unknown_ones_are_reported() {
        let l = lex(r#""a\"b\\c\nd\te" "x\q""#);
        assert_eq!(l.tokens[0].0, Token::Str("a\"b\\c\nd\te".into()));
        assert_eq!(l.errors.len(), 1);
        assert!(l.errors[0].message.contains("unknown escape `\\q`"));
    }

    #[test]
    fn comments_are_collected_without_line_breaks() {
        let l = lex("a # one\r\nb #two");
        let texts: Vec<_> = l.comments.iter().map(|c| c.text.as_str()).collect();
        assert_eq!(texts, vec![" one", "two"]);
        assert_eq!(l.tokens.len(), 2);
    }

    #[test]
    fn bad_characters_are_reported_and_lexing_goes_on() {
        let l = lex("a $$ b ; c");
        assert_eq!(l.errors.len(), 2);
        assert_eq!(l.errors[0].span, Span::new(2, 4));
        assert!(l.errors[1].message.contains("no separator"));
        assert_eq!(l.tokens.len(), 5);
    }
}
