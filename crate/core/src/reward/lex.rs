//! The lexer of the reward formula language: text to tokens with byte spans.
//!
//! Tokens are numbers (`3`, `0.5`, `.5`, `1e-3`), names (`row`, `x_dot`),
//! next-state names (a name directly followed by a prime: `row'`), the
//! keywords `if then else and or not`, the operators `+ - * / ^ < <= > >=
//! == !=`, parentheses and commas. Whitespace separates tokens. A character
//! outside this set is an error whose hint names what to write instead
//! (`&&` → `and`, `=` → `==`, `? :` → `if … then … else …`).

use super::FormulaError;

/// A byte range `[start, end)` in the formula text.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq)]
pub struct Span {
    /// First byte.
    pub start: usize,
    /// One past the last byte.
    pub end: usize,
}

impl Span {
    /// The span from `start` to `end`.
    pub fn new(start: usize, end: usize) -> Self {
        Span { start, end }
    }

    /// The smallest span covering both.
    pub fn to(self, other: Span) -> Span {
        Span { start: self.start.min(other.start), end: self.end.max(other.end) }
    }
}

/// What a token is.
#[derive(Clone, Debug, PartialEq)]
pub enum Tok {
    /// A number literal (finite, not negative: a minus sign is an operator).
    Num(f64),
    /// A name.
    Name(String),
    /// A name followed by a prime: the variable's value in the next state.
    NextName(String),
    /// `if`
    If,
    /// `then`
    Then,
    /// `else`
    Else,
    /// `and`
    And,
    /// `or`
    Or,
    /// `not`
    Not,
    /// `+`
    Plus,
    /// `-`
    Minus,
    /// `*`
    Star,
    /// `/`
    Slash,
    /// `^`
    Caret,
    /// `<`
    Lt,
    /// `<=`
    Le,
    /// `>`
    Gt,
    /// `>=`
    Ge,
    /// `==`
    EqEq,
    /// `!=`
    Ne,
    /// `(`
    LParen,
    /// `)`
    RParen,
    /// `,`
    Comma,
    /// The end of the text.
    End,
}

impl Tok {
    /// How the token reads in a message.
    pub fn describe(&self) -> String {
        match self {
            Tok::Num(v) => format!("the number {v}"),
            Tok::Name(n) => format!("the name `{n}`"),
            Tok::NextName(n) => format!("`{n}'`"),
            Tok::End => "the end of the formula".into(),
            other => format!("`{}`", other.symbol()),
        }
    }

    /// The text of a keyword or operator token (empty for the others).
    pub fn symbol(&self) -> &'static str {
        match self {
            Tok::If => "if",
            Tok::Then => "then",
            Tok::Else => "else",
            Tok::And => "and",
            Tok::Or => "or",
            Tok::Not => "not",
            Tok::Plus => "+",
            Tok::Minus => "-",
            Tok::Star => "*",
            Tok::Slash => "/",
            Tok::Caret => "^",
            Tok::Lt => "<",
            Tok::Le => "<=",
            Tok::Gt => ">",
            Tok::Ge => ">=",
            Tok::EqEq => "==",
            Tok::Ne => "!=",
            Tok::LParen => "(",
            Tok::RParen => ")",
            Tok::Comma => ",",
            Tok::Num(_) | Tok::Name(_) | Tok::NextName(_) | Tok::End => "",
        }
    }
}

/// A token and where it is.
#[derive(Clone, Debug, PartialEq)]
pub struct Token {
    /// The token.
    pub tok: Tok,
    /// Its byte span.
    pub span: Span,
}

fn is_name_start(c: char) -> bool {
    c.is_ascii_alphabetic() || c == '_'
}

fn is_name_char(c: char) -> bool {
    c.is_ascii_alphanumeric() || c == '_'
}

/// Splits a formula into tokens; the last token is always [`Tok::End`].
pub fn lex(text: &str) -> Result<Vec<Token>, FormulaError> {
    let bytes = text.as_bytes();
    let mut out = Vec::new();
    let mut i = 0;
    let err = |start: usize, end: usize, msg: String, hint: &str| {
        Err(FormulaError::new(text, Span::new(start, end), msg, hint))
    };
    while i < bytes.len() {
        let c = text[i..].chars().next().expect("i is on a char boundary");
        let len = c.len_utf8();
        if c.is_whitespace() {
            i += len;
            continue;
        }
        let start = i;
        if c.is_ascii_digit() || (c == '.' && bytes.get(i + 1).is_some_and(u8::is_ascii_digit)) {
            while i < bytes.len() && (bytes[i].is_ascii_digit() || bytes[i] == b'.') {
                i += 1;
            }
            if i < bytes.len() && (bytes[i] == b'e' || bytes[i] == b'E') {
                let mut j = i + 1;
                if j < bytes.len() && (bytes[j] == b'+' || bytes[j] == b'-') {
                    j += 1;
                }
                if j < bytes.len() && bytes[j].is_ascii_digit() {
                    while j < bytes.len() && bytes[j].is_ascii_digit() {
                        j += 1;
                    }
                    i = j;
                } else {
                    return err(
                        start,
                        j,
                        format!("the number `{}` has an exponent without digits", &text[start..j]),
                        "write an exponent like 1e-3 or 2.5e4",
                    );
                }
            }
            let lit = &text[start..i];
            match lit.parse::<f64>() {
                Ok(v) if v.is_finite() => out.push(Token { tok: Tok::Num(v), span: Span::new(start, i) }),
                Ok(_) => {
                    return err(
                        start,
                        i,
                        format!("the number `{lit}` is too large"),
                        "numbers must be below 1.8e308",
                    )
                }
                Err(_) => {
                    return err(
                        start,
                        i,
                        format!("`{lit}` is not a number"),
                        "a number has at most one decimal point, as in 0.25",
                    )
                }
            }
            continue;
        }
        if is_name_start(c) {
            while i < bytes.len() && is_name_char(bytes[i] as char) {
                i += 1;
            }
            let name = &text[start..i];
            if i < bytes.len() && bytes[i] == b'\'' {
                i += 1;
                out.push(Token { tok: Tok::NextName(name.to_string()), span: Span::new(start, i) });
                continue;
            }
            let tok = match name {
                "if" => Tok::If,
                "then" => Tok::Then,
                "else" => Tok::Else,
                "and" => Tok::And,
                "or" => Tok::Or,
                "not" => Tok::Not,
                _ => Tok::Name(name.to_string()),
            };
            out.push(Token { tok, span: Span::new(start, i) });
            continue;
        }
        let next = bytes.get(i + 1).copied();
        let (tok, n) = match (c, next) {
            ('<', Some(b'=')) => (Tok::Le, 2),
            ('>', Some(b'=')) => (Tok::Ge, 2),
            ('=', Some(b'=')) => (Tok::EqEq, 2),
            ('!', Some(b'=')) => (Tok::Ne, 2),
            ('<', _) => (Tok::Lt, 1),
            ('>', _) => (Tok::Gt, 1),
            ('+', _) => (Tok::Plus, 1),
            ('-', _) => (Tok::Minus, 1),
            ('*', Some(b'*')) => {
                return err(start, start + 2, "`**` is not an operator".into(), "write x^2 for a power")
            }
            ('*', _) => (Tok::Star, 1),
            ('/', _) => (Tok::Slash, 1),
            ('^', _) => (Tok::Caret, 1),
            ('(', _) => (Tok::LParen, 1),
            (')', _) => (Tok::RParen, 1),
            (',', _) => (Tok::Comma, 1),
            ('&', _) => {
                let n = if next == Some(b'&') { 2 } else { 1 };
                return err(
                    start,
                    start + n,
                    format!("unexpected `{}`", &text[start..start + n]),
                    "write `and`",
                );
            }
            ('|', _) => {
                let n = if next == Some(b'|') { 2 } else { 1 };
                return err(
                    start,
                    start + n,
                    format!("unexpected `{}`", &text[start..start + n]),
                    "write `or`",
                );
            }
            ('!', _) => {
                return err(start, start + 1, "unexpected `!`".into(), "write `not`, or `!=` for not equal")
            }
            ('=', _) => return err(start, start + 1, "unexpected `=`".into(), "to compare, write `==`"),
            ('\'', _) => {
                return err(
                    start,
                    start + 1,
                    "a prime `'` must follow a state variable's name directly".into(),
                    "write row' for the value of row in the next state",
                )
            }
            ('?', _) | (':', _) => {
                return err(
                    start,
                    start + 1,
                    format!("unexpected `{c}`"),
                    "the conditional is written `if c then a else b`",
                )
            }
            ('[', _) | (']', _) | ('{', _) | ('}', _) => {
                return err(start, start + 1, format!("unexpected `{c}`"), "group with parentheses ( )")
            }
            _ => return err(
                start,
                start + len,
                format!("unexpected character {c:?}"),
                "a formula uses numbers, names, + - * / ^, comparisons, and/or/not, if/then/else, ( ) and ,",
            ),
        };
        i += n;
        out.push(Token { tok, span: Span::new(start, i) });
    }
    out.push(Token { tok: Tok::End, span: Span::new(text.len(), text.len()) });
    Ok(out)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn toks(s: &str) -> Vec<Tok> {
        lex(s).unwrap().into_iter().map(|t| t.tok).collect()
    }

    #[test]
    fn tokens_and_spans() {
        assert_eq!(
            toks("row' <= 2.5e1*.5"),
            vec![Tok::NextName("row".into()), Tok::Le, Tok::Num(25.0), Tok::Star, Tok::Num(0.5), Tok::End]
        );
        assert_eq!(toks("if a then b else not c"), {
            use Tok::*;
            vec![If, Name("a".into()), Then, Name("b".into()), Else, Not, Name("c".into()), End]
        });
        let t = lex("  ab != 3").unwrap();
        assert_eq!(t[0].span, Span::new(2, 4));
        assert_eq!(t[1].span, Span::new(5, 7));
        assert_eq!(t[3].span, Span::new(9, 9));
    }

    #[test]
    fn errors_point_at_the_character_with_a_hint() {
        let e = lex("a && b").unwrap_err();
        assert_eq!((e.start, e.end), (2, 4));
        assert_eq!(e.hint, "write `and`");
        assert_eq!(lex("a = b").unwrap_err().hint, "to compare, write `==`");
        assert!(lex("1.2.3").unwrap_err().message.contains("is not a number"));
        assert!(lex("1e400").unwrap_err().message.contains("too large"));
        assert!(lex("2e+").unwrap_err().message.contains("exponent"));
        let e = lex("θ + 1").unwrap_err();
        assert_eq!((e.start, e.end), (0, 2));
        assert_eq!(e.column, 1);
        assert!(lex("c ? a : b").unwrap_err().hint.contains("if c then a else b"));
    }
}
