//! Parsing rate expressions: ordinary infix maths over gene levels, gradient
//! values and named parameters, with + − × ÷ ^, parentheses, exp, ln, sqrt,
//! abs, min, max and hill(x, K, n) = xⁿ/(Kⁿ + xⁿ).

use super::{Expr, Func, Op};

/// A syntax or name error at a column (1-based) of the expression.
#[derive(Debug, Clone, PartialEq)]
pub struct ParseError {
    /// Column, 1-based.
    pub column: usize,
    /// What is wrong and how to fix it.
    pub message: String,
}

/// What a name in an expression can be.
pub trait Names {
    /// The expression for `name`, or `None` if unknown.
    fn resolve(&self, name: &str) -> Option<Expr>;
    /// All names, for error messages.
    fn known(&self) -> String;
    /// The mean of gene `gene` over a nucleus's neighbours, if supported.
    fn neighbour(&self, gene: usize) -> Option<Expr> {
        let _ = gene;
        None
    }
}

#[derive(Debug, Clone, PartialEq)]
enum Tok {
    Num(f64),
    Name(String),
    Sym(char),
    End,
}

struct Lexer {
    toks: Vec<(Tok, usize)>,
    pos: usize,
}

fn lex(text: &str) -> Result<Vec<(Tok, usize)>, ParseError> {
    let chars: Vec<(usize, char)> = text.char_indices().collect();
    let mut out = Vec::new();
    let mut i = 0;
    let col = |k: usize| text[..chars.get(k).map_or(text.len(), |c| c.0)].chars().count() + 1;
    while i < chars.len() {
        let c = chars[i].1;
        if c.is_whitespace() {
            i += 1;
        } else if c.is_ascii_digit() || c == '.' {
            let start = i;
            while i < chars.len() && (chars[i].1.is_ascii_digit() || chars[i].1 == '.') {
                i += 1;
            }
            if i < chars.len() && (chars[i].1 == 'e' || chars[i].1 == 'E') {
                let save = i;
                i += 1;
                if i < chars.len() && (chars[i].1 == '+' || chars[i].1 == '-') {
                    i += 1;
                }
                if i < chars.len() && chars[i].1.is_ascii_digit() {
                    while i < chars.len() && chars[i].1.is_ascii_digit() {
                        i += 1;
                    }
                } else {
                    i = save;
                }
            }
            let s: String = chars[start..i].iter().map(|c| c.1).collect();
            let v = s
                .parse::<f64>()
                .map_err(|_| ParseError { column: col(start), message: format!("`{s}` is not a number") })?;
            out.push((Tok::Num(v), col(start)));
        } else if c.is_alphabetic() || c == '_' {
            let start = i;
            while i < chars.len() && (chars[i].1.is_alphanumeric() || chars[i].1 == '_') {
                i += 1;
            }
            out.push((Tok::Name(chars[start..i].iter().map(|c| c.1).collect()), col(start)));
        } else if "+-*/^(),".contains(c) {
            out.push((Tok::Sym(c), col(i)));
            i += 1;
        } else {
            return Err(ParseError {
                column: col(i),
                message: format!("unexpected `{c}`; use numbers, names, + - * / ^, parentheses and functions"),
            });
        }
    }
    out.push((Tok::End, col(chars.len())));
    Ok(out)
}

impl Lexer {
    fn peek(&self) -> &(Tok, usize) {
        &self.toks[self.pos]
    }
    fn next(&mut self) -> (Tok, usize) {
        let t = self.toks[self.pos].clone();
        if self.pos + 1 < self.toks.len() {
            self.pos += 1;
        }
        t
    }
    fn expect(&mut self, c: char) -> Result<(), ParseError> {
        match self.next() {
            (Tok::Sym(s), _) if s == c => Ok(()),
            (t, column) => Err(ParseError { column, message: format!("expected `{c}`, found {}", describe(&t)) }),
        }
    }
}

fn describe(t: &Tok) -> String {
    match t {
        Tok::Num(v) => format!("the number {v}"),
        Tok::Name(n) => format!("`{n}`"),
        Tok::Sym(c) => format!("`{c}`"),
        Tok::End => "the end of the expression".into(),
    }
}

/// Parses `text`, resolving names with `names`.
///
/// # Errors
/// [`ParseError`] at the column of the first problem.
pub fn parse(text: &str, names: &dyn Names) -> Result<Expr, ParseError> {
    let mut lx = Lexer { toks: lex(text)?, pos: 0 };
    let e = expr(&mut lx, names)?;
    match lx.peek() {
        (Tok::End, _) => Ok(e),
        (t, column) => Err(ParseError {
            column: *column,
            message: format!("unexpected {} after a complete expression", describe(t)),
        }),
    }
}

fn expr(lx: &mut Lexer, names: &dyn Names) -> Result<Expr, ParseError> {
    let mut left = term(lx, names)?;
    while let (Tok::Sym(c @ ('+' | '-')), _) = lx.peek().clone() {
        lx.next();
        let right = term(lx, names)?;
        left = Expr::Bin(if c == '+' { Op::Add } else { Op::Sub }, Box::new(left), Box::new(right));
    }
    Ok(left)
}

fn term(lx: &mut Lexer, names: &dyn Names) -> Result<Expr, ParseError> {
    let mut left = unary(lx, names)?;
    while let (Tok::Sym(c @ ('*' | '/')), _) = lx.peek().clone() {
        lx.next();
        let right = unary(lx, names)?;
        left = Expr::Bin(if c == '*' { Op::Mul } else { Op::Div }, Box::new(left), Box::new(right));
    }
    Ok(left)
}

fn unary(lx: &mut Lexer, names: &dyn Names) -> Result<Expr, ParseError> {
    if let (Tok::Sym('-'), _) = lx.peek() {
        lx.next();
        return Ok(Expr::Neg(Box::new(unary(lx, names)?)));
    }
    if let (Tok::Sym('+'), _) = lx.peek() {
        lx.next();
        return unary(lx, names);
    }
    power(lx, names)
}

fn power(lx: &mut Lexer, names: &dyn Names) -> Result<Expr, ParseError> {
    let base = atom(lx, names)?;
    if let (Tok::Sym('^'), _) = lx.peek() {
        lx.next();
        let exponent = unary(lx, names)?;
        return Ok(Expr::Bin(Op::Pow, Box::new(base), Box::new(exponent)));
    }
    Ok(base)
}

fn atom(lx: &mut Lexer, names: &dyn Names) -> Result<Expr, ParseError> {
    match lx.next() {
        (Tok::Num(v), _) => Ok(Expr::Num(v)),
        (Tok::Sym('('), _) => {
            let e = expr(lx, names)?;
            lx.expect(')')?;
            Ok(e)
        }
        (Tok::Name(n), column) => {
            if let (Tok::Sym('('), _) = lx.peek() {
                lx.next();
                let mut args = vec![expr(lx, names)?];
                while let (Tok::Sym(','), _) = lx.peek() {
                    lx.next();
                    args.push(expr(lx, names)?);
                }
                lx.expect(')')?;
                if n == "neighbours" {
                    return match args.as_slice() {
                        [Expr::Gene(g)] => names
                            .neighbour(*g)
                            .ok_or_else(|| ParseError { column, message: "neighbours() is not available here".into() }),
                        _ => Err(ParseError {
                            column,
                            message: "neighbours() takes one gene name, e.g. neighbours(quill)".into(),
                        }),
                    };
                }
                return call(&n, args, column);
            }
            names.resolve(&n).ok_or_else(|| ParseError {
                column,
                message: format!("unknown name `{n}`; names here: {}", names.known()),
            })
        }
        (t, column) => {
            Err(ParseError { column, message: format!("expected a number, a name or `(`, found {}", describe(&t)) })
        }
    }
}

fn call(name: &str, mut args: Vec<Expr>, column: usize) -> Result<Expr, ParseError> {
    let want = |n: usize, args: &Vec<Expr>| -> Result<(), ParseError> {
        if args.len() == n {
            Ok(())
        } else {
            Err(ParseError { column, message: format!("`{name}` takes {n} argument(s), given {}", args.len()) })
        }
    };
    let f = match name {
        "exp" => Func::Exp,
        "ln" => Func::Ln,
        "sqrt" => Func::Sqrt,
        "abs" => Func::Abs,
        "min" => Func::Min,
        "max" => Func::Max,
        "hill" => {
            // hill(x, K, n) = x^n / (K^n + x^n)
            want(3, &args)?;
            let n = args.pop().expect("3 args");
            let k = args.pop().expect("3 args");
            let x = args.pop().expect("3 args");
            let xn = Expr::Bin(Op::Pow, Box::new(x), Box::new(n.clone()));
            let kn = Expr::Bin(Op::Pow, Box::new(k), Box::new(n));
            return Ok(Expr::Bin(
                Op::Div,
                Box::new(xn.clone()),
                Box::new(Expr::Bin(Op::Add, Box::new(kn), Box::new(xn))),
            ));
        }
        other => {
            return Err(ParseError {
                column,
                message: format!("unknown function `{other}`; functions: exp, ln, sqrt, abs, min, max, hill"),
            });
        }
    };
    want(if matches!(f, Func::Min | Func::Max) { 2 } else { 1 }, &args)?;
    Ok(Expr::Call(f, args))
}
