//! State shared by the checking passes: the text, the data, the `let`
//! definitions met so far and the diagnostics collected.

use std::collections::HashMap;
use std::sync::Arc;

use frame::{ColumnData, Frame};
use syntax::Span;

use crate::diagnostic::Diagnostic;
use crate::eval::{Evaluator, PanelIndex};
use crate::facts::{Facts, PanelKey};
use crate::value::{Ty, Value};

/// The data behind the file, as far as it is known.
#[derive(Clone, Debug)]
pub struct DataView {
    pub frame: Arc<Frame>,
    /// False when only the header has been read so far (the language server
    /// shows name diagnostics before a large file is loaded): checks that need
    /// values are skipped.
    pub complete: bool,
    /// What the checker learnt about values over this frame, kept for the
    /// next check of the same data (see [`Facts`]).
    pub facts: Arc<Facts>,
}

impl DataView {
    /// A view with an empty cache of facts: hand out clones of one view for
    /// as long as the frame is the same, so that its facts are reused.
    pub fn new(frame: Arc<Frame>, complete: bool) -> DataView {
        DataView {
            facts: Arc::new(Facts::new(frame.n_rows())),
            frame,
            complete,
        }
    }
}

/// A `let` definition.
#[derive(Clone, Debug)]
pub struct LetDef {
    pub name: String,
    pub name_span: Span,
    /// Byte offset where the statement starts; uses before it are errors.
    pub position: usize,
    pub value: Option<Value>,
    pub ty: Ty,
    /// The source text of the definition, for hover.
    pub text: String,
}

pub(crate) struct Ctx<'a> {
    pub text: &'a str,
    pub diags: Vec<Diagnostic>,
    pub data: Option<DataView>,
    pub lets: Vec<LetDef>,
    pub let_index: HashMap<String, usize>,
    /// Where each `let` statement ends, known before the pass, to tell a use
    /// before the definition from an unknown name.
    pub let_positions: HashMap<String, usize>,
    pub panel: Option<(usize, usize)>,
    pub panel_index: Option<Arc<PanelIndex>>,
}

impl<'a> Ctx<'a> {
    pub fn frame(&self) -> Option<&Frame> {
        self.data.as_ref().map(|d| d.frame.as_ref())
    }

    /// The frame when its values are loaded (not only the header).
    pub fn values(&self) -> Option<&Frame> {
        self.data
            .as_ref()
            .filter(|d| d.complete)
            .map(|d| d.frame.as_ref())
    }

    pub fn evaluator(&self) -> Option<Evaluator<'_>> {
        self.values()
            .map(|f| Evaluator::new(f, self.panel_index.as_deref()))
    }

    /// The evaluator with the frame's cache of facts and the panel that
    /// shifted values follow: what every pass over the rows goes through.
    pub fn facts(&self) -> Option<(Evaluator<'_>, Arc<Facts>, PanelKey)> {
        let d = self.data.as_ref().filter(|d| d.complete)?;
        Some((self.evaluator()?, d.facts.clone(), self.panel))
    }

    pub fn column_names(&self) -> Vec<&str> {
        self.frame()
            .map(|f| f.columns().iter().map(|c| c.name.as_str()).collect())
            .unwrap_or_default()
    }

    pub fn column_index(&self, name: &str) -> Option<usize> {
        self.frame()?.column_index(name)
    }

    /// The type of a column: unknown until values are loaded.
    pub fn column_ty(&self, index: usize) -> Ty {
        match self.values() {
            Some(f) => match f.columns()[index].data {
                ColumnData::Numeric(_) => Ty::Number,
                ColumnData::Categorical(_) => Ty::Categorical,
            },
            None => Ty::Unknown,
        }
    }

    pub fn slice(&self, span: Span) -> &'a str {
        self.text.get(span.start..span.end).unwrap_or("")
    }

    /// The label of a piece of source text: the text without whitespace or comments.
    pub fn label(&self, span: Span) -> String {
        label_of(self.slice(span))
    }

    pub fn push(&mut self, d: Diagnostic) {
        self.diags.push(d);
    }

    /// 1-based file line of a data row, for messages.
    pub fn line_of_row(&self, row: usize) -> usize {
        self.frame().map_or(row + 2, |f| f.line_of_row(row))
    }
}

/// Source text without whitespace and without `#` comments.
pub fn label_of(text: &str) -> String {
    let mut out = String::with_capacity(text.len());
    let mut in_comment = false;
    let mut in_quote = None;
    for c in text.chars() {
        match (in_comment, in_quote) {
            (true, _) => in_comment = c != '\n',
            (false, Some(q)) => {
                out.push(c);
                if c == q {
                    in_quote = None;
                }
            }
            (false, None) => match c {
                '#' => in_comment = true,
                '"' | '`' => {
                    in_quote = Some(c);
                    out.push(c);
                }
                c if c.is_whitespace() => {}
                c => out.push(c),
            },
        }
    }
    out
}

/// Thousands separators for row counts in messages.
pub fn count(n: usize) -> String {
    let s = n.to_string();
    let mut out = String::new();
    for (i, c) in s.chars().enumerate() {
        if i > 0 && (s.len() - i).is_multiple_of(3) {
            out.push(',');
        }
        out.push(c);
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn labels_drop_whitespace_and_comments_but_not_quoted_text() {
        assert_eq!(label_of("remote_w * meetings"), "remote_w*meetings");
        assert_eq!(
            label_of("ref(region, \"far north\")"),
            "ref(region,\"far north\")"
        );
        assert_eq!(label_of("a *  # why\n b"), "a*b");
        assert_eq!(count(2400), "2,400");
        assert_eq!(count(999), "999");
        assert_eq!(count(5_000_000), "5,000,000");
    }
}
