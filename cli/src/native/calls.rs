//! The functions compiled kernels call: elementary functions and `powf`, each computed by
//! the very routine the tape calls, so both evaluators round alike.

use geokern_symbolic::expr::Func;

/// The symbol of the two-argument power `a^b`.
pub(super) const POWF: &str = "geokern_powf";

/// The symbol of `sin_cos(a, out)`, which writes `[sin a, cos a]` to `out`.
pub(super) const SIN_COS: &str = "geokern_sin_cos";

/// The symbol a compiled kernel imports for `f`.
pub(super) fn name(f: Func) -> &'static str {
    match f {
        Func::Sin => "geokern_sin",
        Func::Cos => "geokern_cos",
        Func::Tan => "geokern_tan",
        Func::Exp => "geokern_exp",
        Func::Ln => "geokern_ln",
        Func::Sinh => "geokern_sinh",
        Func::Cosh => "geokern_cosh",
        Func::Tanh => "geokern_tanh",
        Func::Asin => "geokern_asin",
        Func::Acos => "geokern_acos",
        Func::Atan => "geokern_atan",
    }
}

/// Defines one `extern "C"` wrapper per function, each calling [`Func::eval`].
macro_rules! unary {
    ($($fn_name:ident => $f:ident),* $(,)?) => {
        $(
            extern "C" fn $fn_name(v: f64) -> f64 {
                Func::$f.eval(v)
            }
        )*

        /// Every symbol with its address, for the code generator's linker.
        pub(super) fn symbols() -> Vec<(&'static str, *const u8)> {
            let mut all: Vec<(&'static str, *const u8)> =
                vec![$((name(Func::$f), $fn_name as *const u8)),*];
            all.push((POWF, powf as *const u8));
            all.push((SIN_COS, sin_cos as *const u8));
            all
        }
    };
}

unary! {
    sin => Sin,
    cos => Cos,
    tan => Tan,
    exp => Exp,
    ln => Ln,
    sinh => Sinh,
    cosh => Cosh,
    tanh => Tanh,
    asin => Asin,
    acos => Acos,
    atan => Atan,
}

extern "C" fn powf(a: f64, b: f64) -> f64 {
    a.powf(b)
}

/// Writes the sine and the cosine of `a`, as the tape computes them, to `out[0]` and
/// `out[1]`.
extern "C" fn sin_cos(a: f64, out: *mut [f64; 2]) {
    let (s, c) = a.sin_cos();
    // SAFETY: compiled kernels pass the address of a 16-byte, 8-aligned stack slot of
    // their own (see `lower::define`).
    unsafe { out.write([s, c]) };
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Every function has its own symbol, so no kernel can call the wrong one.
    #[test]
    fn symbols_are_distinct_and_complete() {
        let all = symbols();
        assert_eq!(all.len(), Func::ALL.len() + 2);
        let mut names: Vec<&str> = all.iter().map(|(n, _)| *n).collect();
        names.sort_unstable();
        names.dedup();
        assert_eq!(names.len(), all.len());
        for f in Func::ALL {
            assert!(names.contains(&name(f)), "{f:?} has no symbol");
        }
    }
}
