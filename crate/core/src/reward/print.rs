//! The pretty-printer of the reward formula language.
//!
//! [`pretty`] writes a tree back as text in one canonical layout: single
//! spaces around binary operators, `name(a, b)` for calls, parentheses only
//! where the grammar needs them (a conditional inside an operator is always
//! parenthesised). Numbers are written in the shortest form that reads back
//! to the same `f64`. Parsing the printed text gives the same tree.

use std::fmt::Write;

use super::parse::{BinOp, Expr, ExprKind, Prec, UnOp};

/// The canonical text of a tree.
pub fn pretty(e: &Expr) -> String {
    let mut out = String::new();
    write_expr(&mut out, e, Prec::IF);
    out
}

/// Writes a number so that it parses back to the same value.
pub fn number(out: &mut String, v: f64) {
    let a = v.abs();
    if a != 0.0 && !(1e-5..1e15).contains(&a) {
        let _ = write!(out, "{v:e}");
    } else {
        let _ = write!(out, "{v}");
    }
}

fn write_expr(out: &mut String, e: &Expr, min: u8) {
    let paren = e.prec() < min;
    if paren {
        out.push('(');
    }
    match &e.kind {
        ExprKind::Num(v) => number(out, *v),
        ExprKind::Name(n) => out.push_str(n),
        ExprKind::Next(n) => {
            out.push_str(n);
            out.push('\'');
        }
        ExprKind::Unary(UnOp::Neg, a) => {
            out.push('-');
            // `- -x` keeps the two minus signs apart for readers.
            if matches!(a.kind, ExprKind::Unary(UnOp::Neg, _)) {
                out.push(' ');
            }
            write_expr(out, a, Prec::NEG);
        }
        ExprKind::Unary(UnOp::Not, a) => {
            out.push_str("not ");
            write_expr(out, a, Prec::NOT);
        }
        ExprKind::Binary(op, a, b) => {
            let p = op.prec();
            let (lmin, rmin) = match op {
                BinOp::Pow => (Prec::ATOM, Prec::NEG),
                _ if p == Prec::COMPARE => (p + 1, p + 1),
                _ => (p, p + 1),
            };
            write_expr(out, a, lmin);
            if *op == BinOp::Pow {
                out.push('^');
            } else {
                out.push(' ');
                out.push_str(op.symbol());
                out.push(' ');
            }
            write_expr(out, b, rmin);
        }
        ExprKind::Call(f, args) => {
            out.push_str(f);
            out.push('(');
            for (i, a) in args.iter().enumerate() {
                if i > 0 {
                    out.push_str(", ");
                }
                write_expr(out, a, Prec::IF);
            }
            out.push(')');
        }
        ExprKind::If(c, a, b) => {
            out.push_str("if ");
            write_expr(out, c, Prec::IF);
            out.push_str(" then ");
            write_expr(out, a, Prec::IF);
            out.push_str(" else ");
            write_expr(out, b, Prec::IF);
        }
    }
    if paren {
        out.push(')');
    }
}

#[cfg(test)]
mod tests {
    use super::super::parse::parse;
    use super::*;

    #[test]
    fn canonical_layout() {
        let cases = [
            ("1+2*3", "1 + 2 * 3"),
            ("(1+2)*3", "(1 + 2) * 3"),
            ("1-(2-3)", "1 - (2 - 3)"),
            ("(-2)^2", "(-2)^2"),
            ("-(2^2)", "-2^2"),
            ("(2^3)^2", "(2^3)^2"),
            ("2^(3^2)", "2^3^2"),
            ("- -x", "- -x"),
            ("-(a*b)", "-(a * b)"),
            ("(if a then 1 else 2)+1", "(if a then 1 else 2) + 1"),
            ("max(a,b ,  c)", "max(a, b, c)"),
            ("not (a and b)", "not (a and b)"),
            ("(a<b)==(c<d)", "(a < b) == (c < d)"),
            ("row'  - row", "row' - row"),
            ("0.000001 + 1e20", "1e-6 + 1e20"),
        ];
        for (src, want) in cases {
            let e = parse(src).unwrap();
            let p = pretty(&e);
            assert_eq!(p, want, "{src}");
            assert_eq!(parse(&p).unwrap(), e, "{src}");
        }
    }
}
