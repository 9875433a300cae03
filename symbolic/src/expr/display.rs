//! Human-readable printing of expressions, for diagnostics and tests.

use std::fmt::Write;

use num_traits::{One, Signed, Zero};

use super::{ExprId, NamedConst, Node, Store};

impl Store {
    /// The expression as text in declaration-like syntax (e.g. `2*r^(-1)*m`).
    pub fn display(&self, e: ExprId) -> String {
        let mut out = String::new();
        self.write(e, &mut out);
        out
    }

    fn write(&self, e: ExprId, out: &mut String) {
        match self.node(e) {
            Node::Num(q) => {
                let _ = write!(out, "{q}");
            }
            Node::Symbol(n) => out.push_str(&self.symbols()[*n as usize].name),
            Node::Constant(NamedConst::Pi) => out.push_str("PI"),
            Node::Constant(NamedConst::E) => out.push('E'),
            Node::Add(c, terms) => {
                out.push('(');
                let mut first = true;
                if !c.is_zero() {
                    let _ = write!(out, "{c}");
                    first = false;
                }
                for (t, k) in terms.iter() {
                    if !first {
                        out.push_str(if k.is_negative() { " - " } else { " + " });
                    } else if k.is_negative() {
                        out.push('-');
                    }
                    first = false;
                    let k = k.abs();
                    if !k.is_one() {
                        let _ = write!(out, "{k}*");
                    }
                    self.write(*t, out);
                }
                out.push(')');
            }
            Node::Mul(factors) => {
                for (i, (b, x)) in factors.iter().enumerate() {
                    if i > 0 {
                        out.push('*');
                    }
                    self.write(*b, out);
                    if !x.is_one() {
                        let _ = write!(out, "^({x})");
                    }
                }
            }
            Node::Call(f, a) => {
                out.push_str(f.name());
                out.push('(');
                self.write(*a, out);
                out.push(')');
            }
            Node::Pow(b, x) => {
                self.write(*b, out);
                out.push_str("^(");
                self.write(*x, out);
                out.push(')');
            }
            Node::Bound(a) => {
                out.push('[');
                self.write(*a, out);
                out.push(']');
            }
        }
    }
}
