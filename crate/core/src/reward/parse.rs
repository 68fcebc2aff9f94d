//! The parser of the reward formula language: tokens to an expression tree.
//!
//! Grammar, loosest binding first (our own design):
//!
//! ```text
//! expr    = "if" expr "then" expr "else" expr | or
//! or      = and { "or" and }
//! and     = not { "and" not }
//! not     = "not" not | compare
//! compare = sum [ ("<" | "<=" | ">" | ">=" | "==" | "!=") sum ]     (no chains)
//! sum     = product { ("+" | "-") product }
//! product = unary { ("*" | "/") unary }
//! unary   = "-" unary | power
//! power   = atom [ "^" unary ]                                       (right-assoc)
//! atom    = number | name | name "'" | name "(" expr { "," expr } ")"
//!         | "(" expr ")" | "if" … (as in expr; the else branch reaches as far right as it can)
//! ```
//!
//! So `-x^2` is `-(x^2)`, `2^3^2` is `2^9`, `not a < b` is `not (a < b)`.
//! Nesting is limited to [`MAX_DEPTH`] levels and the text to
//! [`MAX_FORMULA_BYTES`], so any input parses or fails quickly, without
//! exhausting the stack. [`Expr`]'s equality compares structure, not
//! positions, so a pretty-printed and re-parsed tree equals the original.

use super::lex::{lex, Span, Tok, Token};
use super::FormulaError;

/// Longest formula accepted (bytes).
pub const MAX_FORMULA_BYTES: usize = 4096;
/// Deepest nesting of parentheses, calls, conditionals and prefix operators accepted.
pub const MAX_DEPTH: usize = 64;
/// Largest height of the expression tree accepted (a chain `a + b + c …`
/// adds one level per operator).
pub const MAX_HEIGHT: usize = 256;

/// A unary operator.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum UnOp {
    /// `-x`
    Neg,
    /// `not x` (1 when x is 0 or NaN, else 0)
    Not,
}

/// A binary operator.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum BinOp {
    /// `+`
    Add,
    /// `-`
    Sub,
    /// `*`
    Mul,
    /// `/`
    Div,
    /// `^` (power)
    Pow,
    /// `<`
    Lt,
    /// `<=`
    Le,
    /// `>`
    Gt,
    /// `>=`
    Ge,
    /// `==`
    Eq,
    /// `!=`
    Ne,
    /// `and`
    And,
    /// `or`
    Or,
}

impl BinOp {
    /// The operator's text.
    pub fn symbol(self) -> &'static str {
        match self {
            BinOp::Add => "+",
            BinOp::Sub => "-",
            BinOp::Mul => "*",
            BinOp::Div => "/",
            BinOp::Pow => "^",
            BinOp::Lt => "<",
            BinOp::Le => "<=",
            BinOp::Gt => ">",
            BinOp::Ge => ">=",
            BinOp::Eq => "==",
            BinOp::Ne => "!=",
            BinOp::And => "and",
            BinOp::Or => "or",
        }
    }

    /// Binding strength (higher binds tighter); see [`Prec`].
    pub fn prec(self) -> u8 {
        match self {
            BinOp::Or => Prec::OR,
            BinOp::And => Prec::AND,
            BinOp::Lt | BinOp::Le | BinOp::Gt | BinOp::Ge | BinOp::Eq | BinOp::Ne => Prec::COMPARE,
            BinOp::Add | BinOp::Sub => Prec::SUM,
            BinOp::Mul | BinOp::Div => Prec::PRODUCT,
            BinOp::Pow => Prec::POWER,
        }
    }

    fn of(t: &Tok) -> Option<BinOp> {
        Some(match t {
            Tok::Plus => BinOp::Add,
            Tok::Minus => BinOp::Sub,
            Tok::Star => BinOp::Mul,
            Tok::Slash => BinOp::Div,
            Tok::Lt => BinOp::Lt,
            Tok::Le => BinOp::Le,
            Tok::Gt => BinOp::Gt,
            Tok::Ge => BinOp::Ge,
            Tok::EqEq => BinOp::Eq,
            Tok::Ne => BinOp::Ne,
            _ => return None,
        })
    }
}

/// Binding strengths of the grammar's levels.
pub struct Prec;

impl Prec {
    /// `if … then … else …`
    pub const IF: u8 = 0;
    /// `or`
    pub const OR: u8 = 1;
    /// `and`
    pub const AND: u8 = 2;
    /// `not`
    pub const NOT: u8 = 3;
    /// comparisons
    pub const COMPARE: u8 = 4;
    /// `+ -`
    pub const SUM: u8 = 5;
    /// `* /`
    pub const PRODUCT: u8 = 6;
    /// unary minus
    pub const NEG: u8 = 7;
    /// `^`
    pub const POWER: u8 = 8;
    /// numbers, names, calls, parentheses
    pub const ATOM: u8 = 9;
}

/// What an expression node is.
#[derive(Clone, Debug, PartialEq)]
pub enum ExprKind {
    /// A number.
    Num(f64),
    /// A name (variable or constant).
    Name(String),
    /// A state variable's value in the next state (`row'`).
    Next(String),
    /// A unary operation.
    Unary(UnOp, Box<Expr>),
    /// A binary operation.
    Binary(BinOp, Box<Expr>, Box<Expr>),
    /// A function call.
    Call(String, Vec<Expr>),
    /// `if c then a else b`.
    If(Box<Expr>, Box<Expr>, Box<Expr>),
}

/// An expression node and the text it came from.
#[derive(Clone, Debug)]
pub struct Expr {
    /// What it is.
    pub kind: ExprKind,
    /// Where it is (for error messages; ignored by equality).
    pub span: Span,
}

impl PartialEq for Expr {
    /// Structural equality: positions are ignored.
    fn eq(&self, other: &Self) -> bool {
        self.kind == other.kind
    }
}

impl Expr {
    /// A node without a position (for trees built in code).
    pub fn new(kind: ExprKind) -> Self {
        Expr { kind, span: Span::default() }
    }

    /// The binding strength of this node's outermost operator.
    pub fn prec(&self) -> u8 {
        match &self.kind {
            ExprKind::Num(_) | ExprKind::Name(_) | ExprKind::Next(_) | ExprKind::Call(..) => Prec::ATOM,
            ExprKind::Unary(UnOp::Neg, _) => Prec::NEG,
            ExprKind::Unary(UnOp::Not, _) => Prec::NOT,
            ExprKind::Binary(op, ..) => op.prec(),
            ExprKind::If(..) => Prec::IF,
        }
    }
}

struct Parser<'a> {
    text: &'a str,
    toks: Vec<Token>,
    pos: usize,
    depth: usize,
}

type PResult = Result<Expr, FormulaError>;

/// Parses a formula into its tree.
pub fn parse(text: &str) -> PResult {
    if text.len() > MAX_FORMULA_BYTES {
        return Err(FormulaError::new(
            text,
            Span::new(0, text.len()),
            format!("the formula is {} bytes long; at most {MAX_FORMULA_BYTES} are accepted", text.len()),
            "shorten it, or move numbers into named constants",
        ));
    }
    let toks = lex(text)?;
    let mut p = Parser { text, toks, pos: 0, depth: 0 };
    if p.peek() == &Tok::End {
        return Err(p.error(
            Span::new(0, text.len()),
            "the formula is empty".into(),
            "write an expression, for example: base - 0.1 * abs(col' - col)",
        ));
    }
    let e = p.expr()?;
    match p.peek().clone() {
        Tok::End if height(&e) > MAX_HEIGHT => Err(p.error(
            e.span,
            format!("the formula has more than {MAX_HEIGHT} operations in one chain"),
            "shorten it, or move numbers into named constants",
        )),
        Tok::End => Ok(e),
        Tok::RParen => {
            Err(p.error(p.span(), "this `)` has no matching `(`".into(), "remove it or add a `(` before"))
        }
        tok @ (Tok::Num(_) | Tok::Name(_) | Tok::NextName(_) | Tok::LParen) => Err(p.error(
            p.span(),
            format!("expected an operator or the end of the formula, found {}", tok.describe()),
            "write `*` for a product, as in 2 * x",
        )),
        Tok::Then | Tok::Else => Err(p.error(
            p.span(),
            format!("{} without a matching `if`", p.peek().describe()),
            "the conditional is written `if c then a else b`",
        )),
        Tok::Comma => Err(p.error(
            p.span(),
            "a `,` outside a function call".into(),
            "commas separate function arguments, as in max(a, b)",
        )),
        tok => Err(p.error(
            p.span(),
            format!("expected an operator or the end of the formula, found {}", tok.describe()),
            "",
        )),
    }
}

/// The height of a tree (a leaf has height 1).
pub fn height(e: &Expr) -> usize {
    1 + match &e.kind {
        ExprKind::Num(_) | ExprKind::Name(_) | ExprKind::Next(_) => 0,
        ExprKind::Unary(_, a) => height(a),
        ExprKind::Binary(_, a, b) => height(a).max(height(b)),
        ExprKind::Call(_, args) => args.iter().map(height).max().unwrap_or(0),
        ExprKind::If(c, a, b) => height(c).max(height(a)).max(height(b)),
    }
}

impl<'a> Parser<'a> {
    fn peek(&self) -> &Tok {
        &self.toks[self.pos].tok
    }

    fn span(&self) -> Span {
        self.toks[self.pos].span
    }

    fn bump(&mut self) -> Token {
        let t = self.toks[self.pos].clone();
        if self.pos + 1 < self.toks.len() {
            self.pos += 1;
        }
        t
    }

    fn error(&self, span: Span, message: String, hint: &str) -> FormulaError {
        FormulaError::new(self.text, span, message, hint)
    }

    fn enter(&mut self) -> Result<(), FormulaError> {
        self.depth += 1;
        if self.depth > MAX_DEPTH {
            Err(self.error(
                self.span(),
                format!("the formula nests deeper than {MAX_DEPTH} levels"),
                "split it: move parts into simpler terms or constants",
            ))
        } else {
            Ok(())
        }
    }

    fn leave(&mut self) {
        self.depth -= 1;
    }

    fn expr(&mut self) -> PResult {
        self.enter()?;
        let e = if self.peek() == &Tok::If { self.if_expr() } else { self.or() };
        self.leave();
        e
    }

    fn if_expr(&mut self) -> PResult {
        let start = self.bump().span;
        let cond = self.expr()?;
        if self.peek() != &Tok::Then {
            return Err(self.error(
                self.span(),
                format!("expected `then` after the condition of `if`, found {}", self.peek().describe()),
                "the conditional is written `if c then a else b`",
            ));
        }
        self.bump();
        let yes = self.expr()?;
        if self.peek() != &Tok::Else {
            return Err(self.error(
                self.span(),
                format!("expected `else`, found {}", self.peek().describe()),
                "every `if` needs an `else` branch: if c then a else b",
            ));
        }
        self.bump();
        let no = self.expr()?;
        let span = start.to(no.span);
        Ok(Expr { kind: ExprKind::If(Box::new(cond), Box::new(yes), Box::new(no)), span })
    }

    fn binary_chain(&mut self, op_tok: Tok, op: BinOp, next: fn(&mut Self) -> PResult) -> PResult {
        let mut left = next(self)?;
        while self.peek() == &op_tok {
            self.bump();
            let right = next(self)?;
            let span = left.span.to(right.span);
            left = Expr { kind: ExprKind::Binary(op, Box::new(left), Box::new(right)), span };
        }
        Ok(left)
    }

    fn or(&mut self) -> PResult {
        self.binary_chain(Tok::Or, BinOp::Or, Self::and)
    }

    fn and(&mut self) -> PResult {
        self.binary_chain(Tok::And, BinOp::And, Self::not)
    }

    fn not(&mut self) -> PResult {
        if self.peek() == &Tok::Not {
            self.enter()?;
            let start = self.bump().span;
            let inner = self.not()?;
            self.leave();
            let span = start.to(inner.span);
            return Ok(Expr { kind: ExprKind::Unary(UnOp::Not, Box::new(inner)), span });
        }
        self.compare()
    }

    fn compare(&mut self) -> PResult {
        let left = self.sum()?;
        let Some(op) = BinOp::of(self.peek()).filter(|o| o.prec() == Prec::COMPARE) else {
            return Ok(left);
        };
        self.bump();
        let right = self.sum()?;
        if let Some(op2) = BinOp::of(self.peek()).filter(|o| o.prec() == Prec::COMPARE) {
            return Err(self.error(
                self.span(),
                format!("comparisons do not chain (`{}` after `{}`)", op2.symbol(), op.symbol()),
                "write two comparisons joined by `and`, as in 0 < x and x < 1",
            ));
        }
        let span = left.span.to(right.span);
        Ok(Expr { kind: ExprKind::Binary(op, Box::new(left), Box::new(right)), span })
    }

    fn sum(&mut self) -> PResult {
        let mut left = self.product()?;
        while let Some(op @ (BinOp::Add | BinOp::Sub)) = BinOp::of(self.peek()) {
            self.bump();
            let right = self.product()?;
            let span = left.span.to(right.span);
            left = Expr { kind: ExprKind::Binary(op, Box::new(left), Box::new(right)), span };
        }
        Ok(left)
    }

    fn product(&mut self) -> PResult {
        let mut left = self.unary()?;
        while let Some(op @ (BinOp::Mul | BinOp::Div)) = BinOp::of(self.peek()) {
            self.bump();
            let right = self.unary()?;
            let span = left.span.to(right.span);
            left = Expr { kind: ExprKind::Binary(op, Box::new(left), Box::new(right)), span };
        }
        Ok(left)
    }

    fn unary(&mut self) -> PResult {
        if self.peek() == &Tok::Minus {
            self.enter()?;
            let start = self.bump().span;
            let inner = self.unary()?;
            self.leave();
            let span = start.to(inner.span);
            return Ok(Expr { kind: ExprKind::Unary(UnOp::Neg, Box::new(inner)), span });
        }
        if self.peek() == &Tok::Plus {
            return Err(self.error(self.span(), "a leading `+` is not needed".into(), "remove it"));
        }
        self.power()
    }

    fn power(&mut self) -> PResult {
        let base = self.atom()?;
        if self.peek() != &Tok::Caret {
            return Ok(base);
        }
        self.bump();
        self.enter()?;
        let exp = self.unary()?;
        self.leave();
        let span = base.span.to(exp.span);
        Ok(Expr { kind: ExprKind::Binary(BinOp::Pow, Box::new(base), Box::new(exp)), span })
    }

    fn atom(&mut self) -> PResult {
        let tok = self.bump();
        match tok.tok {
            Tok::Num(v) => Ok(Expr { kind: ExprKind::Num(v), span: tok.span }),
            Tok::NextName(n) => Ok(Expr { kind: ExprKind::Next(n), span: tok.span }),
            Tok::Name(n) => {
                if self.peek() != &Tok::LParen {
                    return Ok(Expr { kind: ExprKind::Name(n), span: tok.span });
                }
                let open = self.bump().span;
                let mut args = Vec::new();
                if self.peek() == &Tok::RParen {
                    // A call without arguments (`noise()`): whether the
                    // function takes none is the compiler's check.
                    let close = self.bump().span;
                    return Ok(Expr { kind: ExprKind::Call(n, args), span: tok.span.to(close) });
                }
                loop {
                    args.push(self.expr()?);
                    match self.peek() {
                        Tok::Comma => {
                            self.bump();
                        }
                        Tok::RParen => break,
                        Tok::End => {
                            return Err(self.error(
                                open,
                                format!("this `(` of `{n}(` is not closed"),
                                "add `)` after the last argument",
                            ))
                        }
                        other => {
                            return Err(self.error(
                                self.span(),
                                format!(
                                    "expected `,` or `)` in the arguments of `{n}`, found {}",
                                    other.describe()
                                ),
                                "separate arguments with commas, as in min(a, b)",
                            ))
                        }
                    }
                }
                let close = self.bump().span;
                Ok(Expr { kind: ExprKind::Call(n, args), span: tok.span.to(close) })
            }
            Tok::LParen => {
                let inner = self.expr()?;
                if self.peek() != &Tok::RParen {
                    let (span, msg) = if self.peek() == &Tok::End {
                        (tok.span, "this `(` is not closed".to_string())
                    } else {
                        (self.span(), format!("expected `)`, found {}", self.peek().describe()))
                    };
                    return Err(self.error(span, msg, "add the missing `)`"));
                }
                let close = self.bump().span;
                Ok(Expr { kind: inner.kind, span: tok.span.to(close) })
            }
            Tok::If => {
                self.pos -= 1;
                self.enter()?;
                let e = self.if_expr();
                self.leave();
                e
            }
            Tok::End => Err(self.error(
                tok.span,
                "the formula ends where a value was expected".into(),
                "finish the expression",
            )),
            other => Err(self.error(
                tok.span,
                format!("expected a number, a name or `(`, found {}", other.describe()),
                match other {
                    Tok::Star
                    | Tok::Slash
                    | Tok::Caret
                    | Tok::Lt
                    | Tok::Le
                    | Tok::Gt
                    | Tok::Ge
                    | Tok::EqEq
                    | Tok::Ne
                    | Tok::And
                    | Tok::Or => "an operator needs a value on each side",
                    Tok::RParen => "the parentheses hold nothing, or a value is missing before `)`",
                    Tok::Comma => "an argument is missing",
                    Tok::Then | Tok::Else => "the conditional is written `if c then a else b`",
                    _ => "",
                },
            )),
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn n(v: f64) -> Expr {
        Expr::new(ExprKind::Num(v))
    }
    fn name(s: &str) -> Expr {
        Expr::new(ExprKind::Name(s.into()))
    }
    fn bin(op: BinOp, a: Expr, b: Expr) -> Expr {
        Expr::new(ExprKind::Binary(op, Box::new(a), Box::new(b)))
    }
    fn neg(a: Expr) -> Expr {
        Expr::new(ExprKind::Unary(UnOp::Neg, Box::new(a)))
    }

    #[test]
    fn precedence_and_associativity() {
        // The grammar in the module documentation (our own design).
        assert_eq!(parse("-x^2").unwrap(), neg(bin(BinOp::Pow, name("x"), n(2.0))));
        assert_eq!(parse("2^3^2").unwrap(), bin(BinOp::Pow, n(2.0), bin(BinOp::Pow, n(3.0), n(2.0))));
        assert_eq!(parse("1 - 2 - 3").unwrap(), bin(BinOp::Sub, bin(BinOp::Sub, n(1.0), n(2.0)), n(3.0)));
        assert_eq!(parse("1 + 2 * 3").unwrap(), bin(BinOp::Add, n(1.0), bin(BinOp::Mul, n(2.0), n(3.0))));
        assert_eq!(
            parse("a < 1 or b and c").unwrap(),
            bin(BinOp::Or, bin(BinOp::Lt, name("a"), n(1.0)), bin(BinOp::And, name("b"), name("c")))
        );
        assert_eq!(
            parse("not a == b").unwrap(),
            Expr::new(ExprKind::Unary(UnOp::Not, Box::new(bin(BinOp::Eq, name("a"), name("b")))))
        );
        assert_eq!(parse("2^-1").unwrap(), bin(BinOp::Pow, n(2.0), neg(n(1.0))));
        let e = parse("1 + if a then 2 else 3 + 4").unwrap();
        let ExprKind::Binary(BinOp::Add, _, r) = e.kind else { panic!("{e:?}") };
        assert!(matches!(r.kind, ExprKind::If(..)));
    }

    #[test]
    fn errors_name_the_place() {
        let e = parse("a < b < c").unwrap_err();
        assert!(e.message.contains("do not chain"), "{e:?}");
        assert_eq!(e.start, 6);
        let e = parse("max(a, b").unwrap_err();
        assert!(e.message.contains("not closed"));
        assert_eq!(e.start, 3);
        let e = parse("2 x").unwrap_err();
        assert!(e.hint.contains("`*`"));
        let e = parse("if a then b").unwrap_err();
        assert!(e.message.contains("expected `else`"));
        assert!(parse("").unwrap_err().message.contains("empty"));
        assert!(parse("(1 + 2").unwrap_err().message.contains("not closed"));
        assert!(parse("1 +").unwrap_err().message.contains("ends where a value"));
        let deep = "(".repeat(100) + "1" + &")".repeat(100);
        assert!(parse(&deep).unwrap_err().message.contains("deeper than 64"));
        let long = "1+".repeat(3000) + "1";
        assert!(parse(&long).unwrap_err().message.contains("bytes long"));
        let chain = "1+".repeat(300) + "1";
        assert!(parse(&chain).unwrap_err().message.contains("more than 256 operations"));
        assert_eq!(parse(&("-".repeat(60) + "1")).map(|_| ()), Ok(()));
    }
}
