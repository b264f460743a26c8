//! Parsing rate expressions: ordinary infix maths over gene levels, gradient
//! values and named parameters, with + − × ÷ ^, parentheses, exp, ln, sqrt,
//! abs, min, max, cos, sin (radians), step(x) (1 for x ≥ 0, else 0) and
//! hill(x, K, n) = xⁿ/(Kⁿ + xⁿ).

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
    /// Nesting of parentheses, signs, powers and calls so far.
    depth: usize,
}

/// Longest rate expression read, characters.
pub const MAX_CHARS: usize = 4_000_000;
/// Deepest nesting of parentheses, signs, powers and function calls.
pub const MAX_NESTING: usize = 64;
/// Sums and products of more terms than this are built as balanced trees
/// (depth log₂ n instead of n), so long expressions cost time and memory in
/// proportion to their length; shorter ones keep left-to-right order.
const BALANCE_ABOVE: usize = 8;

fn lex(text: &str) -> Result<Vec<(Tok, usize)>, ParseError> {
    let chars: Vec<(usize, char)> = text.char_indices().collect();
    let mut out = Vec::new();
    let mut i = 0;
    // `chars` is indexed by character, so the k-th character is in column k + 1.
    let col = |k: usize| k + 1;
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
    let length = text.chars().count();
    if length > MAX_CHARS {
        return Err(ParseError {
            column: MAX_CHARS,
            message: format!(
                "the expression is {length} characters long, more than {MAX_CHARS}; split it into genes or constants"
            ),
        });
    }
    let mut lx = Lexer { toks: lex(text)?, pos: 0, depth: 0 };
    let e = expr(&mut lx, names)?;
    match lx.peek() {
        (Tok::End, _) => Ok(e),
        (t, column) => Err(ParseError {
            column: *column,
            message: format!("unexpected {} after a complete expression", describe(t)),
        }),
    }
}

impl Lexer {
    /// One level deeper; refused past [`MAX_NESTING`].
    fn descend(&mut self) -> Result<(), ParseError> {
        self.depth += 1;
        if self.depth > MAX_NESTING {
            return Err(ParseError {
                column: self.peek().1,
                message: format!(
                    "the expression nests more than {MAX_NESTING} levels deep (parentheses, signs, powers, calls); write it flatter"
                ),
            });
        }
        Ok(())
    }
    fn ascend(&mut self) {
        self.depth -= 1;
    }
}

/// Combines `items` with `op` left to right, or as a balanced tree when
/// there are more than [`BALANCE_ABOVE`].
fn combine(op: Op, mut items: Vec<Expr>) -> Expr {
    if items.len() <= BALANCE_ABOVE {
        let mut it = items.into_iter();
        let first = it.next().expect("at least one term");
        return it.fold(first, |acc, e| Expr::Bin(op, Box::new(acc), Box::new(e)));
    }
    while items.len() > 1 {
        let mut next = Vec::with_capacity(items.len().div_ceil(2));
        let mut it = items.into_iter();
        while let Some(a) = it.next() {
            match it.next() {
                Some(b) => next.push(Expr::Bin(op, Box::new(a), Box::new(b))),
                None => next.push(a),
            }
        }
        items = next;
    }
    items.pop().expect("one left")
}

fn expr(lx: &mut Lexer, names: &dyn Names) -> Result<Expr, ParseError> {
    let first = term(lx, names)?;
    let mut rest: Vec<(char, Expr)> = Vec::new();
    while let (Tok::Sym(c @ ('+' | '-')), _) = lx.peek().clone() {
        lx.next();
        rest.push((c, term(lx, names)?));
    }
    if rest.len() < BALANCE_ABOVE {
        return Ok(rest.into_iter().fold(first, |left, (c, right)| {
            Expr::Bin(if c == '+' { Op::Add } else { Op::Sub }, Box::new(left), Box::new(right))
        }));
    }
    // A long sum: a − b + c … = a + (−b) + c …, balanced.
    let mut terms = vec![first];
    terms.extend(rest.into_iter().map(|(c, e)| if c == '+' { e } else { Expr::Neg(Box::new(e)) }));
    Ok(combine(Op::Add, terms))
}

fn term(lx: &mut Lexer, names: &dyn Names) -> Result<Expr, ParseError> {
    let first = unary(lx, names)?;
    let mut rest: Vec<(char, Expr)> = Vec::new();
    while let (Tok::Sym(c @ ('*' | '/')), _) = lx.peek().clone() {
        lx.next();
        rest.push((c, unary(lx, names)?));
    }
    if rest.len() < BALANCE_ABOVE {
        return Ok(rest.into_iter().fold(first, |left, (c, right)| {
            Expr::Bin(if c == '*' { Op::Mul } else { Op::Div }, Box::new(left), Box::new(right))
        }));
    }
    // A long product: a / b · c … = (a · c …) / (b · …), each side balanced.
    let (mut num, mut den) = (vec![first], Vec::new());
    for (c, e) in rest {
        if c == '*' { num.push(e) } else { den.push(e) }
    }
    let top = combine(Op::Mul, num);
    Ok(if den.is_empty() { top } else { Expr::Bin(Op::Div, Box::new(top), Box::new(combine(Op::Mul, den))) })
}

fn unary(lx: &mut Lexer, names: &dyn Names) -> Result<Expr, ParseError> {
    lx.descend()?;
    let e = match lx.peek() {
        (Tok::Sym('-'), _) => {
            lx.next();
            unary(lx, names).map(|e| Expr::Neg(Box::new(e)))
        }
        (Tok::Sym('+'), _) => {
            lx.next();
            unary(lx, names)
        }
        _ => power(lx, names),
    };
    lx.ascend();
    e
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
            lx.descend()?;
            let e = expr(lx, names)?;
            lx.expect(')')?;
            lx.ascend();
            Ok(e)
        }
        (Tok::Name(n), column) => {
            if let (Tok::Sym('('), _) = lx.peek() {
                lx.next();
                lx.descend()?;
                let mut args = vec![expr(lx, names)?];
                while let (Tok::Sym(','), _) = lx.peek() {
                    lx.next();
                    args.push(expr(lx, names)?);
                }
                lx.expect(')')?;
                lx.ascend();
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
        "cos" => Func::Cos,
        "sin" => Func::Sin,
        "step" => Func::Step,
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
                message: format!(
                    "unknown function `{other}`; functions: exp, ln, sqrt, abs, min, max, cos, sin, step, hill"
                ),
            });
        }
    };
    want(if matches!(f, Func::Min | Func::Max) { 2 } else { 1 }, &args)?;
    Ok(Expr::Call(f, args))
}
