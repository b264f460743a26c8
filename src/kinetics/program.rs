//! Compiled rate expressions: postfix code over chunk-wide registers, each
//! instruction a loop over a contiguous row (so it vectorises).

use crate::kinetics::CHUNK;
use crate::model::expr::{Expr, Func, MAX_DEPTH, Op, call, pow};

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

/// A compiled expression: postfix instructions over chunk-wide registers.
#[derive(Debug, Clone, PartialEq)]
pub struct Program {
    code: Vec<Ins>,
}

impl Program {
    /// Compiles an expression; `None` if it needs more than [`MAX_DEPTH`]
    /// stack slots ([`Expr::stack_depth`]).
    pub fn compile(e: &Expr) -> Option<Program> {
        let depth = e.stack_depth();
        if depth > MAX_DEPTH {
            return None;
        }
        let mut code = Vec::new();
        emit(e, &mut code);
        // Peephole: a row pushed only to be combined with the top, or to have
        // one operation applied, is read in place.
        let mut fused = Vec::with_capacity(code.len());
        let mut i = 0;
        while i < code.len() {
            let pair = match (code[i], code.get(i + 1)) {
                (Ins::Gene(g), Some(&Ins::Bin(op))) => Some(Ins::BinGene(op, g)),
                (Ins::Input(k), Some(&Ins::Bin(op))) => Some(Ins::BinInput(op, k)),
                (Ins::Gene(g), Some(&Ins::Un(op))) => Some(Ins::GeneUn(g, op)),
                (Ins::Input(k), Some(&Ins::Un(op))) => Some(Ins::InputUn(k, op)),
                _ => None,
            };
            fused.push(pair.unwrap_or(code[i]));
            i += if pair.is_some() { 2 } else { 1 };
        }
        Some(Program { code: fused })
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
            crate::simd::with_avx2(
                #[inline(always)]
                || self.run_with(gene, input, len, out, stack),
            )
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
fn emit(e: &Expr, code: &mut Vec<Ins>) {
    match e {
        Expr::Num(v) => code.push(Ins::Const(*v)),
        Expr::Gene(g) => code.push(Ins::Gene(*g)),
        Expr::Input(k) => code.push(Ins::Input(*k)),
        Expr::Neg(a) => {
            emit(a, code);
            code.push(Ins::Un(Unary::Neg));
        }
        Expr::Bin(Op::Pow, a, b) if matches!(**b, Expr::Num(n) if n.fract() == 0.0 && n.abs() <= 64.0) => {
            emit(a, code);
            let Expr::Num(n) = **b else { unreachable!("matched a number") };
            code.push(Ins::Un(Unary::PowI(n as i32)));
        }
        Expr::Bin(op, a, b) => match (&**a, &**b) {
            (_, Expr::Num(c)) => {
                emit(a, code);
                code.push(Ins::Un(Unary::BinConst(*op, *c)));
            }
            (Expr::Num(c), _) => {
                emit(b, code);
                code.push(Ins::Un(Unary::ConstBin(*op, *c)));
            }
            _ => {
                emit(a, code);
                emit(b, code);
                code.push(Ins::Bin(*op));
            }
        },
        Expr::Call(f, args) => {
            for a in args {
                emit(a, code);
            }
            code.push(Ins::Call(*f, args.len()));
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    /// Tree-walking evaluation at one point: the meaning of an expression,
    /// independent of the compiled code.
    fn meaning(e: &Expr, u: &[f64], m: &[f64]) -> f64 {
        match e {
            Expr::Num(v) => *v,
            Expr::Gene(g) => u[*g],
            Expr::Input(k) => m[*k],
            Expr::Neg(a) => -meaning(a, u, m),
            Expr::Bin(op, a, b) => {
                let (a, b) = (meaning(a, u, m), meaning(b, u, m));
                match op {
                    Op::Add => a + b,
                    Op::Sub => a - b,
                    Op::Mul => a * b,
                    Op::Div => a / b,
                    Op::Pow => a.powf(b),
                }
            }
            Expr::Call(f, args) => call(*f, &args.iter().map(|a| meaning(a, u, m)).collect::<Vec<_>>()),
        }
    }

    fn b(op: Op, a: Expr, c: Expr) -> Expr {
        Expr::Bin(op, Box::new(a), Box::new(c))
    }

    /// Every fused and plain instruction, with results landing in the output
    /// row (register 0) and in deeper registers, matches the tree's meaning.
    #[test]
    fn compiled_code_matches_the_tree_in_every_register() {
        let (u0, u1, m0) = (Expr::Gene(0), Expr::Gene(1), Expr::Input(0));
        let n = |v: f64| Expr::Num(v);
        let ops = [Op::Add, Op::Sub, Op::Mul, Op::Div, Op::Pow];
        let mut cases = vec![Expr::Neg(Box::new(u0.clone())), Expr::Neg(Box::new(m0.clone()))];
        for op in ops {
            cases.push(b(op, u0.clone(), n(2.5)));
            cases.push(b(op, n(1.5), u1.clone()));
            cases.push(b(op, m0.clone(), n(3.0)));
            cases.push(b(op, n(0.7), m0.clone()));
            cases.push(b(op, u0.clone(), u1.clone()));
            cases.push(b(op, u1.clone(), m0.clone()));
        }
        for k in [-1.0, 0.0, 1.0, 2.0, 3.0, 4.0, 5.0] {
            cases.push(b(Op::Pow, u0.clone(), n(k)));
            cases.push(b(Op::Pow, m0.clone(), n(k)));
        }
        cases.push(Expr::Call(Func::Max, vec![u0.clone(), u1.clone()]));
        cases.push(Expr::Call(Func::Choose, vec![u0.clone(), n(1.0), u1.clone(), m0.clone()]));
        cases.push(Expr::Call(Func::Exp, vec![Expr::Neg(Box::new(u1.clone()))]));
        cases.push(Expr::Call(Func::Cos, vec![b(Op::Mul, u0.clone(), n(3.0))]));
        cases.push(Expr::Call(Func::Sin, vec![b(Op::Sub, u1.clone(), m0.clone())]));
        cases.push(Expr::Call(Func::Step, vec![b(Op::Sub, u0.clone(), n(1.2))]));
        // Each case also one and two registers deep (0.5 + (u1 · case)).
        let deep: Vec<Expr> = cases
            .iter()
            .flat_map(|c| {
                let one = b(Op::Mul, u1.clone(), c.clone());
                [b(Op::Add, n(0.5), one.clone()), b(Op::Sub, u0.clone(), b(Op::Add, m0.clone(), one))]
            })
            .collect();
        let len = 37;
        let genes: Vec<Vec<f64>> =
            (0..2).map(|g| (0..len).map(|i| 0.1 + 0.37 * ((i * (g + 3)) % 11) as f64).collect()).collect();
        let inputs: Vec<f64> = (0..len).map(|i| 0.05 + 0.21 * (i % 7) as f64).collect();
        for e in cases.iter().chain(&deep) {
            let program = Program::compile(e).expect("shallow");
            let mut out = vec![f64::NAN; len];
            program.run(&|g| &genes[g][..], &|_| &inputs[..], len, &mut out);
            for i in 0..len {
                let want = meaning(e, &[genes[0][i], genes[1][i]], &[inputs[i]]);
                assert_relative_eq!(out[i], want, max_relative = 1e-13);
            }
        }
    }
}
