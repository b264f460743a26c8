//! The grammar of rate expressions: the expression tree, its parser,
//! symbolic derivatives and constant folding. The kinetics stage compiles
//! trees into stack programs (`crate::kinetics::Program`); how deep a stack a
//! tree needs is decided here ([`Expr::stack_depth`]), so that a model is
//! checked when it is loaded.

mod names;
mod parse;

pub use names::{InitialNames, ModelNames};
pub use parse::{Names, ParseError, parse};

/// Deepest stack a compiled expression may need (expressions needing more are refused).
pub const MAX_DEPTH: usize = 24;

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
    /// cos x (x in radians)
    Cos,
    /// sin x (x in radians)
    Sin,
    /// step(x) = 1 for x ≥ 0, else 0 (Heaviside)
    Step,
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
    /// Registers a postfix evaluation of this tree needs at once, when it is
    /// evaluated left operand first, a constant operand of a binary operator
    /// (and an integer power up to 64) is folded into a one-register
    /// operation, and the k-th argument of a call lands in register `k`.
    /// This is the compiler's own rule (`crate::kinetics::Program::compile`
    /// refuses trees deeper than [`MAX_DEPTH`] by it).
    pub fn stack_depth(&self) -> usize {
        self.depth_from(0)
    }

    fn depth_from(&self, depth: usize) -> usize {
        match self {
            Expr::Num(_) | Expr::Gene(_) | Expr::Input(_) => depth + 1,
            Expr::Neg(a) => a.depth_from(depth),
            Expr::Bin(Op::Pow, a, b) if matches!(**b, Expr::Num(n) if n.fract() == 0.0 && n.abs() <= 64.0) => {
                a.depth_from(depth)
            }
            Expr::Bin(_, a, b) => match (&**a, &**b) {
                (_, Expr::Num(_)) => a.depth_from(depth),
                (Expr::Num(_), _) => b.depth_from(depth),
                _ => a.depth_from(depth).max(b.depth_from(depth + 1)),
            },
            Expr::Call(_, args) => {
                args.iter().enumerate().map(|(k, a)| a.depth_from(depth + k)).fold(depth, usize::max)
            }
        }
    }

    /// True if some leaf (number, gene or input) has `leaf(e)`.
    fn any_leaf(&self, leaf: &impl Fn(&Expr) -> bool) -> bool {
        match self {
            Expr::Num(_) | Expr::Gene(_) | Expr::Input(_) => leaf(self),
            Expr::Neg(a) => a.any_leaf(leaf),
            Expr::Bin(_, a, b) => a.any_leaf(leaf) || b.any_leaf(leaf),
            Expr::Call(_, args) => args.iter().any(|a| a.any_leaf(leaf)),
        }
    }

    /// True if the expression reads gene `g`.
    pub fn depends_on(&self, g: usize) -> bool {
        self.any_leaf(&|e| matches!(e, Expr::Gene(i) if *i == g))
    }

    /// True if the expression reads an input row whose index `k` has `wanted(k)`.
    pub fn reads_input(&self, wanted: &impl Fn(usize) -> bool) -> bool {
        self.any_leaf(&|e| matches!(e, Expr::Input(k) if wanted(*k)))
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
            Expr::Bin(op @ (Op::Add | Op::Sub), a, b) => bin(*op, a.derivative(g), b.derivative(g)),
            Expr::Bin(op, a, b) => {
                // The factors are cloned only where the rule needs them.
                let (da, db) = (a.derivative(g), b.derivative(g));
                let (a, b) = (a.as_ref().clone(), b.as_ref().clone());
                match op {
                    Op::Add | Op::Sub => unreachable!("handled above"),
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
                    Func::Sign | Func::Step => num(0.0),
                    Func::Cos => bin(Op::Mul, Expr::Neg(Box::new(simplify(Expr::Call(Func::Sin, vec![a])))), da),
                    Func::Sin => bin(Op::Mul, simplify(Expr::Call(Func::Cos, vec![a])), da),
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

pub(crate) fn apply(op: Op, x: f64, y: f64) -> f64 {
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
pub(crate) fn pow(x: f64, y: f64) -> f64 {
    if y.fract() == 0.0 && y.abs() <= 64.0 { x.powi(y as i32) } else { x.powf(y) }
}

impl Expr {
    /// The value of the tree with input k (a gradient, or the position in an
    /// initial formula) at `inputs[k]`; gene levels are not defined here
    /// (NaN).
    pub fn value(&self, inputs: &[f64]) -> f64 {
        match self {
            Expr::Num(v) => *v,
            Expr::Gene(_) => f64::NAN,
            Expr::Input(k) => inputs.get(*k).copied().unwrap_or(f64::NAN),
            Expr::Neg(a) => -a.value(inputs),
            Expr::Bin(op, a, b) => apply(*op, a.value(inputs), b.value(inputs)),
            Expr::Call(f, args) => call(*f, &args.iter().map(|a| a.value(inputs)).collect::<Vec<_>>()),
        }
    }
}

pub(crate) fn call(f: Func, a: &[f64]) -> f64 {
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
        Func::Cos => a[0].cos(),
        Func::Sin => a[0].sin(),
        Func::Step => {
            if a[0] >= 0.0 {
                1.0
            } else if a[0] < 0.0 {
                0.0
            } else {
                f64::NAN
            }
        }
        Func::Choose => {
            if a[0] <= a[1] {
                a[2]
            } else {
                a[3]
            }
        }
    }
}

#[cfg(test)]
mod trig_tests {
    use super::*;

    /// d/du of cos(3u)·sin(u) + step(u − 1), read off the symbolic
    /// derivative, against a central difference (h = 1e-6; step is flat
    /// away from its jump).
    #[test]
    fn trig_and_step_derivatives_match_differences() {
        let u = Expr::Gene(0);
        let three_u = Expr::Bin(Op::Mul, Box::new(Expr::Num(3.0)), Box::new(u.clone()));
        let e = Expr::Bin(
            Op::Add,
            Box::new(Expr::Bin(
                Op::Mul,
                Box::new(Expr::Call(Func::Cos, vec![three_u])),
                Box::new(Expr::Call(Func::Sin, vec![u.clone()])),
            )),
            Box::new(Expr::Call(Func::Step, vec![Expr::Bin(Op::Sub, Box::new(u.clone()), Box::new(Expr::Num(1.0)))])),
        );
        let d = e.derivative(0);
        // Genes are read as inputs by `value` only through a substitution:
        // evaluate with the gene replaced by an input.
        fn subst(e: &Expr, v: f64) -> Expr {
            match e {
                Expr::Gene(_) => Expr::Num(v),
                Expr::Neg(a) => Expr::Neg(Box::new(subst(a, v))),
                Expr::Bin(op, a, b) => Expr::Bin(*op, Box::new(subst(a, v)), Box::new(subst(b, v))),
                Expr::Call(f, args) => Expr::Call(*f, args.iter().map(|a| subst(a, v)).collect()),
                other => other.clone(),
            }
        }
        for x in [0.3, 0.7, 1.4, 2.9] {
            let h = 1e-6;
            let diff = (subst(&e, x + h).value(&[]) - subst(&e, x - h).value(&[])) / (2.0 * h);
            let exact = subst(&d, x).value(&[]);
            assert!((diff - exact).abs() < 1e-7, "at {x}: {exact} against {diff}");
            let want = -3.0 * (3.0 * x).sin() * x.sin() + (3.0 * x).cos() * x.cos();
            assert!((exact - want).abs() < 1e-12, "at {x}: {exact} against {want}");
        }
    }
}
