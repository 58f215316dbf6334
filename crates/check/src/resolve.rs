//! Name and type resolution of expressions: every name becomes a column or an
//! inlined `let`, every call a known function with the right arguments, and
//! every operand gets the type its operator needs. Errors are reported here,
//! where the span of the offending text is at hand.

use frame::ColumnData;
use syntax::ast::{BinaryOp, Call, Expr, ExprKind, Ident, UnaryOp};
use syntax::{Span, FUNCTIONS};

use crate::context::{count, Ctx};
use crate::diagnostic::{codes, Diagnostic, Edit};
use crate::suggest::nearest;
use crate::value::{Ty, Value};

/// A resolved expression; `value` is `None` when an error was reported.
#[derive(Clone, Debug)]
pub struct Resolved {
    pub value: Option<Value>,
    pub ty: Ty,
}

impl Resolved {
    fn bad() -> Self {
        Resolved {
            value: None,
            ty: Ty::Unknown,
        }
    }

    fn ok(value: Value, ty: Ty) -> Self {
        Resolved {
            value: Some(value),
            ty,
        }
    }
}

impl Ctx<'_> {
    /// Resolve a name used at byte offset `at`.
    pub fn resolve_name(&mut self, id: &Ident) -> Resolved {
        if let Some(&i) = self.let_index.get(&id.name) {
            let def = &self.lets[i];
            if def.position <= id.span.start {
                return match &def.value {
                    Some(v) => Resolved::ok(v.clone(), def.ty),
                    None => Resolved::bad(),
                };
            }
        }
        let later_let = self
            .let_positions
            .get(&id.name)
            .is_some_and(|&p| p > id.span.start);
        if let Some(c) = self.column_index(&id.name) {
            return Resolved::ok(Value::Column(c), self.column_ty(c));
        }
        if later_let {
            let msg = format!(
                "`{}` is used before its `let` definition further down; move the definition above this line",
                id.name
            );
            self.push(Diagnostic::error(
                codes::USED_BEFORE_DEFINITION,
                id.span,
                msg,
            ));
            return Resolved::bad();
        }
        self.unknown_name(id);
        Resolved::bad()
    }

    /// Report a name that is neither a column nor a `let`, suggesting the nearest.
    pub fn unknown_name(&mut self, id: &Ident) {
        let Some(frame) = self.frame() else {
            // The data file could not be read; that is reported on `source`.
            return;
        };
        let _ = frame;
        let lets: Vec<String> = self
            .lets
            .iter()
            .filter(|l| l.position <= id.span.start)
            .map(|l| l.name.clone())
            .collect();
        let names = self.column_names();
        let candidates = names.iter().copied().chain(lets.iter().map(String::as_str));
        let suggestion = nearest(&id.name, candidates).map(str::to_string);
        let mut msg = format!("no column or `let` named `{}` in the data", id.name);
        let mut d;
        if let Some(s) = suggestion {
            msg.push_str(&format!("; did you mean `{s}`?"));
            let text = quote_name(&s);
            d = Diagnostic::error(codes::UNKNOWN_COLUMN, id.span, msg);
            d = d.with_replacement(format!("Replace with `{s}`"), id.span, text);
        } else {
            d = Diagnostic::error(codes::UNKNOWN_COLUMN, id.span, msg);
        }
        self.push(d);
    }

    /// A grouping argument or declaration: must be a column of the data.
    pub fn resolve_grouping(&mut self, id: &Ident) -> Option<usize> {
        if let Some(c) = self.column_index(&id.name) {
            return Some(c);
        }
        if self.let_index.contains_key(&id.name) {
            let msg = format!(
                "`{}` is a `let` name; a grouping must be an id column of the data",
                id.name
            );
            self.push(Diagnostic::error(codes::BAD_ARGUMENT, id.span, msg));
            return None;
        }
        self.unknown_name(id);
        None
    }

    pub fn resolve_expr(&mut self, expr: &Expr) -> Resolved {
        match &expr.kind {
            ExprKind::Number(n) => Resolved::ok(Value::Number(n.value), Ty::Number),
            ExprKind::Str(s) => Resolved::ok(Value::Text(s.value.clone()), Ty::Text),
            ExprKind::Name(id) => self.resolve_name(id),
            ExprKind::Call(call) => self.resolve_call(call),
            ExprKind::Paren(inner) => self.resolve_expr(inner),
            ExprKind::Error => Resolved::bad(),
            ExprKind::Unary { op, expr: inner } => {
                let r = self.resolve_expr(inner);
                let Some(v) = self.require_number(&r, inner.span) else {
                    return Resolved::bad();
                };
                match op {
                    UnaryOp::Neg => Resolved::ok(Value::Neg(Box::new(v)), Ty::Number),
                    UnaryOp::Not => Resolved::ok(Value::Not(Box::new(v)), Ty::Logical),
                }
            }
            ExprKind::Binary { op, lhs, rhs } => self.resolve_binary(*op, lhs, rhs),
        }
    }

    fn resolve_binary(&mut self, op: BinaryOp, lhs: &Expr, rhs: &Expr) -> Resolved {
        let a = self.resolve_expr(lhs);
        let b = self.resolve_expr(rhs);
        let is_level_test = matches!(op, BinaryOp::Eq | BinaryOp::Ne)
            && matches!(
                (a.ty, b.ty),
                (Ty::Categorical, Ty::Text) | (Ty::Text, Ty::Categorical)
            );
        if is_level_test {
            let (cat, cat_span, text) = if a.ty == Ty::Categorical {
                (&a, lhs.span, &b)
            } else {
                (&b, rhs.span, &a)
            };
            self.check_level(cat, text, cat_span);
            let (Some(va), Some(vb)) = (a.value, b.value) else {
                return Resolved::bad();
            };
            return Resolved::ok(Value::Binary(op, Box::new(va), Box::new(vb)), Ty::Logical);
        }
        let va = self.require_number(&a, lhs.span);
        let vb = self.require_number(&b, rhs.span);
        let (Some(va), Some(vb)) = (va, vb) else {
            return Resolved::bad();
        };
        let ty = match op {
            BinaryOp::Add | BinaryOp::Sub | BinaryOp::Mul | BinaryOp::Div | BinaryOp::Pow => {
                Ty::Number
            }
            _ => Ty::Logical,
        };
        Resolved::ok(Value::Binary(op, Box::new(va), Box::new(vb)), ty)
    }

    /// `region == "north"`: the level should exist, or the test is always false.
    fn check_level(&mut self, cat: &Resolved, text: &Resolved, span: Span) {
        let (Some(Value::Column(c)), Some(Value::Text(level))) = (&cat.value, &text.value) else {
            return;
        };
        let Some(frame) = self.values() else { return };
        let col = &frame.columns()[*c];
        if let ColumnData::Categorical(cc) = &col.data {
            if !cc.levels.iter().any(|l| l == level) {
                let msg = format!(
                    "column `{}` has no level \"{}\" (its levels: {}), so this test is never true",
                    col.name,
                    level,
                    list_levels(&cc.levels)
                );
                self.push(Diagnostic::warning(codes::UNKNOWN_LEVEL, span, msg));
            }
        }
    }

    /// The value as a number, or an error saying why it is not one.
    pub fn require_number(&mut self, r: &Resolved, span: Span) -> Option<Value> {
        match r.ty {
            Ty::Number | Ty::Logical => r.value.clone(),
            Ty::Unknown => r.value.clone(),
            Ty::Text => {
                let msg = "a string is not a number here; strings only name levels, as in `region == \"north\"` or `ref(region, \"north\")`";
                self.push(Diagnostic::error(codes::TEXT_AS_NUMBER, span, msg));
                None
            }
            Ty::Categorical => {
                let d = self.text_as_number(r.value.as_ref(), span);
                self.push(d);
                None
            }
        }
    }

    /// Why a categorical value cannot be used as a number, with a fix when a
    /// stray text value in an otherwise numeric column is the cause.
    pub fn text_as_number(&self, value: Option<&Value>, span: Span) -> Diagnostic {
        let frame = self.values();
        if let (Some(Value::Column(c)), Some(frame)) = (value, frame) {
            let col = &frame.columns()[*c];
            if let ColumnData::Categorical(cc) = &col.data {
                if let Some(t) = &cc.text_in_numbers {
                    let msg = format!(
                        "column `{}` is used as a number but holds text at line {}: \"{}\" ({} other values are numbers); mark that text as missing on the `source` line or correct the data",
                        col.name,
                        frame.line_of_row(t.row),
                        t.value,
                        count(t.numeric_count)
                    );
                    return Diagnostic::error(codes::TEXT_AS_NUMBER, span, msg);
                }
                let msg = format!(
                    "column `{}` holds text ({} levels: {}), not numbers; use it as a term on its own for indicator coding",
                    col.name,
                    count(cc.levels.len()),
                    list_levels(&cc.levels)
                );
                return Diagnostic::error(codes::TEXT_AS_NUMBER, span, msg);
            }
        }
        Diagnostic::error(
            codes::TEXT_AS_NUMBER,
            span,
            "categories are used here as a number; arithmetic and functions need numbers",
        )
    }

    pub fn resolve_call(&mut self, call: &Call) -> Resolved {
        let name = call.func.name.as_str();
        let Some(info) = FUNCTIONS.iter().find(|f| f.name == name) else {
            let names = FUNCTIONS.iter().map(|f| f.name);
            let mut d;
            match nearest(name, names) {
                Some(s) => {
                    d = Diagnostic::error(
                        codes::UNKNOWN_FUNCTION,
                        call.func.span,
                        format!("unknown function `{name}`; did you mean `{s}`?"),
                    );
                    d = d.with_replacement(format!("Replace with `{s}`"), call.func.span, s);
                }
                None => {
                    let all: Vec<&str> = FUNCTIONS.iter().map(|f| f.name).collect();
                    d = Diagnostic::error(
                        codes::UNKNOWN_FUNCTION,
                        call.func.span,
                        format!(
                            "unknown function `{name}`; the functions are {}",
                            all.join(", ")
                        ),
                    );
                }
            }
            self.push(d);
            for a in &call.args {
                self.resolve_expr(a);
            }
            return Resolved::bad();
        };
        let n = call.args.len();
        if n < info.min_args || n > info.max_args {
            let want = if info.min_args == info.max_args {
                format!("{} argument{}", info.min_args, plural(info.min_args))
            } else {
                format!("{} or {} arguments", info.min_args, info.max_args)
            };
            let msg = format!(
                "`{name}` takes {want} ({}), but {n} {} given",
                info.signature,
                if n == 1 { "was" } else { "were" }
            );
            self.push(Diagnostic::error(codes::ARGUMENT_COUNT, call.span, msg));
            return Resolved::bad();
        }
        let arg = &call.args[0];
        match name {
            "within" | "between" => {
                let x = self.resolve_expr(arg);
                let x = self.require_number(&x, arg.span);
                let g = self.grouping_arg(&call.args[1], name);
                let (Some(x), Some(g)) = (x, g) else {
                    return Resolved::bad();
                };
                let v = if name == "within" {
                    Value::Within(Box::new(x), g)
                } else {
                    Value::Between(Box::new(x), g)
                };
                Resolved::ok(v, Ty::Number)
            }
            "center" | "z" | "log" | "sqrt" => {
                let x = self.resolve_expr(arg);
                let Some(x) = self.require_number(&x, arg.span) else {
                    return Resolved::bad();
                };
                if matches!(name, "log" | "sqrt") {
                    self.check_domain(name, &x, arg.span, call.span);
                }
                let x = Box::new(x);
                let v = match name {
                    "center" => Value::Center(x),
                    "z" => Value::Z(x),
                    "log" => Value::Log(x),
                    _ => Value::Sqrt(x),
                };
                Resolved::ok(v, Ty::Number)
            }
            "lag" | "lead" | "diff" => {
                if self.panel.is_none() {
                    let msg = format!(
                        "`{name}` needs a panel: declare the unit and time columns first, e.g. `panel firm over year`"
                    );
                    self.push(Diagnostic::error(codes::NEEDS_PANEL, call.span, msg));
                }
                let x = self.resolve_expr(arg);
                let x = self.require_number(&x, arg.span);
                let k = match call.args.get(1) {
                    None => Some(1),
                    Some(e) => self.whole_number(e, name),
                };
                let (Some(x), Some(k), true) = (x, k, self.panel.is_some()) else {
                    return Resolved::bad();
                };
                let v = match name {
                    "lag" => Value::Shift {
                        x: Box::new(x),
                        k,
                        diff: false,
                    },
                    "lead" => Value::Shift {
                        x: Box::new(x),
                        k: -k,
                        diff: false,
                    },
                    _ => Value::Shift {
                        x: Box::new(x),
                        k,
                        diff: true,
                    },
                };
                Resolved::ok(v, Ty::Number)
            }
            "categorical" => {
                let x = self.resolve_expr(arg);
                let Some(x) = x.value else {
                    return Resolved::bad();
                };
                Resolved::ok(
                    Value::Categorical {
                        x: Box::new(x),
                        reference: None,
                    },
                    Ty::Categorical,
                )
            }
            "ref" => {
                let x = self.resolve_expr(arg);
                let level_arg = &call.args[1];
                let ExprKind::Str(level) = &level_arg.kind else {
                    let msg = "the second argument of `ref` is the reference level in double quotes, e.g. `ref(region, \"north\")`";
                    self.push(Diagnostic::error(codes::BAD_ARGUMENT, level_arg.span, msg));
                    return Resolved::bad();
                };
                let Some(xv) = x.value else {
                    return Resolved::bad();
                };
                if let Some(levels) = self.levels_of(&xv) {
                    if !levels.iter().any(|l| l == &level.value) {
                        let msg = format!(
                            "\"{}\" is not a level of `{}` (its levels: {})",
                            level.value,
                            self.slice(arg.span),
                            list_levels(&levels)
                        );
                        let mut d = Diagnostic::error(codes::UNKNOWN_LEVEL, level.span, msg);
                        if let Some(s) = nearest(&level.value, levels.iter().map(String::as_str)) {
                            d = d.with_replacement(
                                format!("Use \"{s}\""),
                                level.span,
                                format!("\"{s}\""),
                            );
                        }
                        self.push(d);
                        return Resolved::bad();
                    }
                }
                Resolved::ok(
                    Value::Categorical {
                        x: Box::new(xv),
                        reference: Some(level.value.clone()),
                    },
                    Ty::Categorical,
                )
            }
            _ => Resolved::bad(),
        }
    }

    /// Count the rows where `log`/`sqrt` is undefined; they become missing.
    fn check_domain(&mut self, func: &str, x: &Value, arg_span: Span, call_span: Span) {
        let Some((ev, facts, panel)) = self.facts() else {
            return;
        };
        let (n_bad, first) = facts.domain(&ev, panel, x, func == "log");
        if let Some(row) = first {
            let cond = if func == "log" { "≤ 0" } else { "< 0" };
            let msg = format!(
                "`{}` is undefined in {} row{} where `{}` {cond} (first at line {}); those rows count as missing",
                self.slice(call_span),
                count(n_bad),
                plural(n_bad),
                self.slice(arg_span),
                self.line_of_row(row)
            );
            self.push(Diagnostic::warning(codes::DOMAIN, call_span, msg));
        }
    }

    /// The levels a categorical value will have, when known without evaluating more than a column.
    fn levels_of(&self, v: &Value) -> Option<std::sync::Arc<Vec<String>>> {
        let (ev, facts, panel) = self.facts()?;
        facts.levels(&ev, panel, v)
    }

    fn grouping_arg(&mut self, e: &Expr, func: &str) -> Option<usize> {
        match &e.kind {
            ExprKind::Name(id) => self.resolve_grouping(id),
            _ => {
                let msg = format!(
                    "the second argument of `{func}` is a grouping column, e.g. `{func}(remote_days, team)`"
                );
                self.push(Diagnostic::error(codes::BAD_ARGUMENT, e.span, msg));
                None
            }
        }
    }

    fn whole_number(&mut self, e: &Expr, func: &str) -> Option<i64> {
        if let ExprKind::Number(n) = &e.kind {
            if n.value >= 1.0 && n.value.fract() == 0.0 && n.value <= 1000.0 {
                return Some(n.value as i64);
            }
        }
        let msg = format!("the number of periods in `{func}` must be a whole number of at least 1, e.g. `{func}(x, 2)`");
        self.push(Diagnostic::error(codes::BAD_ARGUMENT, e.span, msg));
        None
    }
}

/// A column name as it must be written: backticks when it is not a plain identifier.
pub fn quote_name(name: &str) -> String {
    let mut chars = name.chars();
    let plain = chars.next().is_some_and(|c| c.is_alphabetic() || c == '_')
        && chars.all(|c| c.is_alphanumeric() || c == '_' || c == '.');
    if plain {
        name.to_string()
    } else {
        format!("`{name}`")
    }
}

/// At most five levels, quoted, for messages.
pub fn list_levels(levels: &[String]) -> String {
    let mut shown: Vec<String> = levels.iter().take(5).map(|l| format!("\"{l}\"")).collect();
    if levels.len() > 5 {
        shown.push(format!("and {} more", levels.len() - 5));
    }
    shown.join(", ")
}

pub fn plural(n: usize) -> &'static str {
    if n == 1 {
        ""
    } else {
        "s"
    }
}

/// An edit inserting `text` at a byte offset.
pub fn insert_at(offset: usize, text: impl Into<String>) -> Edit {
    Edit {
        span: Span::new(offset, offset),
        text: text.into(),
    }
}
