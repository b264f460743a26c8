//! Rate expressions: parsed once, differentiated symbolically, and compiled to
//! a stack program that runs over a whole chunk of nuclei per instruction
//! (structure of arrays), so no expression is interpreted per nucleus.

mod parse;

pub use parse::{Names, ParseError, parse};

use super::CHUNK;

/// Binary operators.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Op {
    /// +
    Add,
    /// −
    Sub,
    /// ×
    Mul,
    /// ÷
    Div,
    /// ^
    Pow,
}

/// Functions.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Func {
    /// eˣ
    Exp,
    /// natural logarithm
    Ln,
    /// √
    Sqrt,
    /// |x|
    Abs,
    /// sign(x) (−1, 0, 1); arises in derivatives of abs
    Sign,
    /// min(a, b)
    Min,
    /// max(a, b)
    Max,
    /// choose(a, b, x, y) = x if a ≤ b else y; arises in derivatives of min/max
    Choose,
}

/// An expression tree.
#[derive(Debug, Clone, PartialEq)]
pub enum Expr {
    /// A constant (numbers and named parameters).
    Num(f64),
    /// Level of gene i.
    Gene(usize),
    /// Value of input (gradient) k.
    Input(usize),
    /// −a
    Neg(Box<Expr>),
    /// a op b
    Bin(Op, Box<Expr>, Box<Expr>),
    /// f(args)
    Call(Func, Vec<Expr>),
}

fn num(v: f64) -> Expr {
    Expr::Num(v)
}
fn bin(op: Op, a: Expr, b: Expr) -> Expr {
    simplify(Expr::Bin(op, Box::new(a), Box::new(b)))
}

impl Expr {
    /// True if the expression reads gene `g`.
    pub fn depends_on(&self, g: usize) -> bool {
        match self {
            Expr::Gene(i) => *i == g,
            Expr::Num(_) | Expr::Input(_) => false,
            Expr::Neg(a) => a.depends_on(g),
            Expr::Bin(_, a, b) => a.depends_on(g) || b.depends_on(g),
            Expr::Call(_, args) => args.iter().any(|a| a.depends_on(g)),
        }
    }

    /// True if the expression reads an input row with index ≥ `first`.
    pub fn reads_input_from(&self, first: usize) -> bool {
        match self {
            Expr::Input(k) => *k >= first,
            Expr::Num(_) | Expr::Gene(_) => false,
            Expr::Neg(a) => a.reads_input_from(first),
            Expr::Bin(_, a, b) => a.reads_input_from(first) || b.reads_input_from(first),
            Expr::Call(_, args) => args.iter().any(|a| a.reads_input_from(first)),
        }
    }

    /// ∂/∂(gene g), simplified.
    pub fn derivative(&self, g: usize) -> Expr {
        if !self.depends_on(g) {
            return num(0.0);
        }
        match self {
            Expr::Num(_) | Expr::Input(_) => num(0.0),
            Expr::Gene(i) => num(if *i == g { 1.0 } else { 0.0 }),
            Expr::Neg(a) => simplify(Expr::Neg(Box::new(a.derivative(g)))),
            Expr::Bin(op, a, b) => {
                let (a, b) = (a.as_ref().clone(), b.as_ref().clone());
                let (da, db) = (a.derivative(g), b.derivative(g));
                match op {
                    Op::Add => bin(Op::Add, da, db),
                    Op::Sub => bin(Op::Sub, da, db),
                    Op::Mul => bin(Op::Add, bin(Op::Mul, da, b.clone()), bin(Op::Mul, a, db)),
                    Op::Div => bin(
                        Op::Div,
                        bin(Op::Sub, bin(Op::Mul, da, b.clone()), bin(Op::Mul, a, db)),
                        bin(Op::Mul, b.clone(), b),
                    ),
                    Op::Pow if !b.depends_on(g) => {
                        // d(a^b) = b·a^(b−1)·a'
                        bin(Op::Mul, bin(Op::Mul, b.clone(), bin(Op::Pow, a, bin(Op::Sub, b, num(1.0)))), da)
                    }
                    Op::Pow => {
                        // d(a^b) = a^b·(b'·ln a + b·a'/a)
                        let ln_a = simplify(Expr::Call(Func::Ln, vec![a.clone()]));
                        let inner =
                            bin(Op::Add, bin(Op::Mul, db, ln_a), bin(Op::Div, bin(Op::Mul, b.clone(), da), a.clone()));
                        bin(Op::Mul, bin(Op::Pow, a, b), inner)
                    }
                }
            }
            Expr::Call(f, args) => {
                let a = args[0].clone();
                let da = a.derivative(g);
                match f {
                    Func::Exp => bin(Op::Mul, self.clone(), da),
                    Func::Ln => bin(Op::Div, da, a),
                    Func::Sqrt => bin(Op::Div, da, bin(Op::Mul, num(2.0), self.clone())),
                    Func::Abs => bin(Op::Mul, simplify(Expr::Call(Func::Sign, vec![a])), da),
                    Func::Sign => num(0.0),
                    Func::Min | Func::Max => {
                        let (b, db) = (args[1].clone(), args[1].derivative(g));
                        // min: a' where a ≤ b; max: a' where b ≤ a.
                        let (p, q) = if *f == Func::Min { (a, b) } else { (b, a) };
                        simplify(Expr::Call(Func::Choose, vec![p, q, da, db]))
                    }
                    Func::Choose => simplify(Expr::Call(
                        Func::Choose,
                        vec![args[0].clone(), args[1].clone(), args[2].derivative(g), args[3].derivative(g)],
                    )),
                }
            }
        }
    }
}

/// Folds constants and drops ×1, ×0, +0.
pub fn simplify(e: Expr) -> Expr {
    match e {
        Expr::Neg(a) => match *a {
            Expr::Num(v) => num(-v),
            Expr::Neg(b) => *b,
            other => Expr::Neg(Box::new(other)),
        },
        Expr::Bin(op, a, b) => {
            let (a, b) = (*a, *b);
            match (&a, &b, op) {
                (Expr::Num(x), Expr::Num(y), _) => num(apply(op, *x, *y)),
                (Expr::Num(z), _, Op::Add) if *z == 0.0 => b,
                (_, Expr::Num(z), Op::Add | Op::Sub) if *z == 0.0 => a,
                (Expr::Num(z), _, Op::Sub) if *z == 0.0 => simplify(Expr::Neg(Box::new(b))),
                (Expr::Num(z), _, Op::Mul | Op::Div) if *z == 0.0 => num(0.0),
                (_, Expr::Num(z), Op::Mul) if *z == 0.0 => num(0.0),
                (Expr::Num(o), _, Op::Mul) if *o == 1.0 => b,
                (_, Expr::Num(o), Op::Mul | Op::Div | Op::Pow) if *o == 1.0 => a,
                (_, Expr::Num(z), Op::Pow) if *z == 0.0 => num(1.0),
                _ => Expr::Bin(op, Box::new(a), Box::new(b)),
            }
        }
        Expr::Call(f, args) => {
            if args.iter().all(|a| matches!(a, Expr::Num(_))) {
                let v: Vec<f64> = args.iter().map(|a| if let Expr::Num(x) = a { *x } else { 0.0 }).collect();
                return num(call(f, &v));
            }
            if f == Func::Choose && args[2] == args[3] {
                return args[2].clone();
            }
            Expr::Call(f, args)
        }
        other => other,
    }
}

fn apply(op: Op, x: f64, y: f64) -> f64 {
    match op {
        Op::Add => x + y,
        Op::Sub => x - y,
        Op::Mul => x * y,
        Op::Div => x / y,
        Op::Pow => pow(x, y),
    }
}

/// x^y with integer exponents done by repeated multiplication (exact signs).
#[inline(always)]
fn pow(x: f64, y: f64) -> f64 {
    if y.fract() == 0.0 && y.abs() <= 64.0 { x.powi(y as i32) } else { x.powf(y) }
}

fn call(f: Func, a: &[f64]) -> f64 {
    match f {
        Func::Exp => a[0].exp(),
        Func::Ln => a[0].ln(),
        Func::Sqrt => a[0].sqrt(),
        Func::Abs => a[0].abs(),
        Func::Sign => {
            if a[0] > 0.0 {
                1.0
            } else if a[0] < 0.0 {
                -1.0
            } else {
                0.0
            }
        }
        Func::Min => a[0].min(a[1]),
        Func::Max => a[0].max(a[1]),
        Func::Choose => {
            if a[0] <= a[1] {
                a[2]
            } else {
                a[3]
            }
        }
    }
}

/// An operation on one register.
#[derive(Debug, Clone, Copy, PartialEq)]
enum Unary {
    Neg,
    /// x op c
    BinConst(Op, f64),
    /// c op x
    ConstBin(Op, f64),
    PowI(i32),
}

#[derive(Debug, Clone, Copy, PartialEq)]
enum Ins {
    Const(f64),
    Gene(usize),
    Input(usize),
    /// top ← unary(top)
    Un(Unary),
    /// push unary(gene row) (a `Gene` then `Un`, without the copy)
    GeneUn(usize, Unary),
    /// push unary(input row) (an `Input` then `Un`, without the copy)
    InputUn(usize, Unary),
    Bin(Op),
    Call(Func, usize),
    /// top ← top op gene row (a `Gene` then `Bin`, without the copy)
    BinGene(Op, usize),
    /// top ← top op input row (an `Input` then `Bin`, without the copy)
    BinInput(Op, usize),
}

/// Deepest stack a program may need (expressions nested deeper are refused).
pub const MAX_DEPTH: usize = 24;

/// A compiled expression: postfix instructions over chunk-wide registers.
#[derive(Debug, Clone, PartialEq)]
pub struct Program {
    code: Vec<Ins>,
}

impl Program {
    /// Compiles an expression; `None` if it needs more than [`MAX_DEPTH`] stack slots.
    pub fn compile(e: &Expr) -> Option<Program> {
        let mut code = Vec::new();
        let depth = emit(e, &mut code, 0);
        // Peephole: a row pushed only to be combined with the top, or to have
        // one operation applied, is read in place.
        let mut fused = Vec::with_capacity(code.len());
        let mut i = 0;
        while i < code.len() {
            match (code[i], code.get(i + 1)) {
                (Ins::Gene(g), Some(&Ins::Bin(op))) => {
                    fused.push(Ins::BinGene(op, g));
                    i += 2;
                }
                (Ins::Input(k), Some(&Ins::Bin(op))) => {
                    fused.push(Ins::BinInput(op, k));
                    i += 2;
                }
                (Ins::Gene(g), Some(&Ins::Un(op))) => {
                    fused.push(Ins::GeneUn(g, op));
                    i += 2;
                }
                (Ins::Input(k), Some(&Ins::Un(op))) => {
                    fused.push(Ins::InputUn(k, op));
                    i += 2;
                }
                (ins, _) => {
                    fused.push(ins);
                    i += 1;
                }
            }
        }
        (depth <= MAX_DEPTH).then_some(Program { code: fused })
    }

    /// Evaluates over a chunk: `gene(i)` and `input(k)` give the chunk's rows;
    /// writes `len` values into `out`.
    pub fn run<'a>(
        &self,
        gene: &dyn Fn(usize) -> &'a [f64],
        input: &dyn Fn(usize) -> &'a [f64],
        len: usize,
        out: &mut [f64],
    ) {
        thread_local! {
            /// The register file, kept per thread so no call pays for clearing it.
            static STACK: std::cell::RefCell<[[f64; CHUNK]; MAX_DEPTH]> =
                const { std::cell::RefCell::new([[0.0; CHUNK]; MAX_DEPTH]) };
        }
        STACK.with_borrow_mut(|stack| {
            #[cfg(target_arch = "x86_64")]
            if std::arch::is_x86_feature_detected!("avx2") {
                /// The same code compiled for 4-wide vectors (no fused multiply–add
                /// is introduced, so results are bit-identical to the plain path).
                #[target_feature(enable = "avx2")]
                fn wide<'a>(
                    p: &Program,
                    gene: &dyn Fn(usize) -> &'a [f64],
                    input: &dyn Fn(usize) -> &'a [f64],
                    len: usize,
                    out: &mut [f64],
                    stack: &mut [[f64; CHUNK]],
                ) {
                    p.run_with(gene, input, len, out, stack)
                }
                // SAFETY: the CPU was just checked for AVX2.
                return unsafe { wide(self, gene, input, len, out, stack) };
            }
            self.run_with(gene, input, len, out, stack)
        })
    }

    /// Runs the code with register 0 being `out` itself (so the result needs
    /// no copy) and registers 1.. in `stack`.
    #[inline(always)]
    fn run_with<'a>(
        &self,
        gene: &dyn Fn(usize) -> &'a [f64],
        input: &dyn Fn(usize) -> &'a [f64],
        len: usize,
        out: &mut [f64],
        stack: &mut [[f64; CHUNK]],
    ) {
        let out = &mut out[..len];
        /// Register `i`.
        fn reg<'s>(out: &'s mut [f64], stack: &'s mut [[f64; CHUNK]], i: usize, len: usize) -> &'s mut [f64] {
            if i == 0 { out } else { &mut stack[i][..len] }
        }
        let mut top = 0usize;
        for ins in &self.code {
            match *ins {
                Ins::Const(c) => {
                    reg(out, stack, top, len).fill(c);
                    top += 1;
                }
                Ins::Gene(g) => {
                    reg(out, stack, top, len).copy_from_slice(&gene(g)[..len]);
                    top += 1;
                }
                Ins::Input(k) => {
                    reg(out, stack, top, len).copy_from_slice(&input(k)[..len]);
                    top += 1;
                }
                Ins::GeneUn(g, op) => {
                    unary(op, reg(out, stack, top, len), Some(&gene(g)[..len]));
                    top += 1;
                }
                Ins::InputUn(k, op) => {
                    unary(op, reg(out, stack, top, len), Some(&input(k)[..len]));
                    top += 1;
                }
                Ins::Un(op) => unary(op, reg(out, stack, top - 1, len), None),
                Ins::Bin(op) => {
                    // top − 1 ≥ 1, so the right operand is always in `stack`.
                    let (lo, hi) = stack.split_at_mut(top - 1);
                    let a = reg(out, lo, top - 2, len);
                    combine(op, a, &hi[0][..len]);
                    top -= 1;
                }
                Ins::BinGene(op, g) => combine(op, reg(out, stack, top - 1, len), &gene(g)[..len]),
                Ins::BinInput(op, k) => combine(op, reg(out, stack, top - 1, len), &input(k)[..len]),
                Ins::Call(f, n) => {
                    let base = top - n;
                    let mut args = [0.0f64; 4];
                    for i in 0..len {
                        for (k, a) in args[..n].iter_mut().enumerate() {
                            *a = if base + k == 0 { out[i] } else { stack[base + k][i] };
                        }
                        let v = call(f, &args[..n]);
                        if base == 0 { out[i] = v } else { stack[base][i] = v }
                    }
                    top = base + 1;
                }
            }
        }
    }

    /// Evaluates at one point.
    pub fn eval(&self, u: &[f64], m: &[f64]) -> f64 {
        let mut out = [0.0];
        let gene_rows: Vec<[f64; 1]> = u.iter().map(|v| [*v]).collect();
        let input_rows: Vec<[f64; 1]> = m.iter().map(|v| [*v]).collect();
        self.run(&|g| &gene_rows[g][..], &|k| &input_rows[k][..], 1, &mut out);
        out[0]
    }
}

/// x^n for an integer n; small powers as products (powi with a runtime
/// exponent is a call per element).
#[inline(always)]
fn powi_small(x: f64, n: i32) -> f64 {
    match n {
        0 => 1.0,
        1 => x,
        2 => x * x,
        3 => x * x * x,
        4 => {
            let y = x * x;
            y * y
        }
        -1 => 1.0 / x,
        _ => x.powi(n),
    }
}

/// `dst ← op(src)`, or `dst ← op(dst)` without a source, with the operation
/// resolved outside the loop so that each arm vectorises.
#[inline(always)]
fn unary(op: Unary, dst: &mut [f64], src: Option<&[f64]>) {
    macro_rules! map {
        ($f:expr) => {{
            let f = $f;
            match src {
                Some(src) => dst.iter_mut().zip(src).for_each(|(d, &x)| *d = f(x)),
                None => dst.iter_mut().for_each(|d| *d = f(*d)),
            }
        }};
    }
    match op {
        Unary::Neg => map!(|x: f64| -x),
        Unary::BinConst(op, c) => match op {
            Op::Add => map!(|x: f64| x + c),
            Op::Sub => map!(|x: f64| x - c),
            Op::Mul => map!(|x: f64| x * c),
            Op::Div => {
                let inv = 1.0 / c;
                map!(|x: f64| x * inv)
            }
            Op::Pow => map!(|x: f64| pow(x, c)),
        },
        Unary::ConstBin(op, c) => match op {
            Op::Add => map!(|x: f64| c + x),
            Op::Sub => map!(|x: f64| c - x),
            Op::Mul => map!(|x: f64| c * x),
            Op::Div => map!(|x: f64| c / x),
            Op::Pow => map!(|x: f64| pow(c, x)),
        },
        Unary::PowI(n) => match n {
            2 => map!(|x: f64| x * x),
            3 => map!(|x: f64| x * x * x),
            4 => map!(|x: f64| powi_small(x, 4)),
            _ => map!(|x: f64| powi_small(x, n)),
        },
    }
}

/// `a ← a op b`, element by element.
#[inline(always)]
fn combine(op: Op, a: &mut [f64], b: &[f64]) {
    match op {
        Op::Add => a.iter_mut().zip(b).for_each(|(x, y)| *x += y),
        Op::Sub => a.iter_mut().zip(b).for_each(|(x, y)| *x -= y),
        Op::Mul => a.iter_mut().zip(b).for_each(|(x, y)| *x *= y),
        Op::Div => a.iter_mut().zip(b).for_each(|(x, y)| *x /= y),
        Op::Pow => a.iter_mut().zip(b).for_each(|(x, y)| *x = pow(*x, *y)),
    }
}

/// Emits postfix code; returns the stack depth needed.
fn emit(e: &Expr, code: &mut Vec<Ins>, depth: usize) -> usize {
    match e {
        Expr::Num(v) => {
            code.push(Ins::Const(*v));
            depth + 1
        }
        Expr::Gene(g) => {
            code.push(Ins::Gene(*g));
            depth + 1
        }
        Expr::Input(k) => {
            code.push(Ins::Input(*k));
            depth + 1
        }
        Expr::Neg(a) => {
            let d = emit(a, code, depth);
            code.push(Ins::Un(Unary::Neg));
            d
        }
        Expr::Bin(Op::Pow, a, b) if matches!(**b, Expr::Num(n) if n.fract() == 0.0 && n.abs() <= 64.0) => {
            let d = emit(a, code, depth);
            let Expr::Num(n) = **b else { unreachable!("matched a number") };
            code.push(Ins::Un(Unary::PowI(n as i32)));
            d
        }
        Expr::Bin(op, a, b) => match (&**a, &**b) {
            (_, Expr::Num(c)) => {
                let d = emit(a, code, depth);
                code.push(Ins::Un(Unary::BinConst(*op, *c)));
                d
            }
            (Expr::Num(c), _) => {
                let d = emit(b, code, depth);
                code.push(Ins::Un(Unary::ConstBin(*op, *c)));
                d
            }
            _ => {
                let da = emit(a, code, depth);
                let db = emit(b, code, depth + 1);
                code.push(Ins::Bin(*op));
                da.max(db)
            }
        },
        Expr::Call(f, args) => {
            let mut d = depth;
            for (k, a) in args.iter().enumerate() {
                d = d.max(emit(a, code, depth + k));
            }
            code.push(Ins::Call(*f, args.len()));
            d
        }
    }
}
