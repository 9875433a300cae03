//! A metric read at run time, driven through the runtime's [`MetricKernels`] trait.
//!
//! [`TapeSet`] holds one [`Tape`] per kernel of a metric, with its parameter values, and,
//! when asked for, the same kernels compiled to machine code ([`NativeKernel`]);
//! [`TapeMetric`] views it at a dimension fixed at compile time, so the runtime's integrators,
//! events and monitors drive it exactly as they drive a struct made by `geokern::metric!`.
//! The [`with_dimension!`](crate::with_dimension) macro turns the dimension known at run time
//! into that constant. Both evaluators give the same bits, so the choice changes speed only.

use std::cell::RefCell;
use std::sync::{Arc, OnceLock};

use geokern_runtime::MetricKernels;
use geokern_symbolic::kernels::KernelSet;
use geokern_symbolic::program::{KernelKind, KernelProgram};

use crate::error::CliError;
use crate::native::{NativeError, NativeKernel};
use crate::tape::{Inputs, Registers, Tape, TapeError};

/// Which evaluator runs a metric's kernels.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq)]
pub enum Evaluator {
    /// Native code where this machine has a code generator, the tape elsewhere.
    #[default]
    Auto,
    /// Native code, or an error on a machine without a code generator.
    Native,
    /// The tape interpreter: nothing to compile, slower per call.
    Tape,
}

impl Evaluator {
    /// Every choice, by its name on the command line.
    pub const NAMES: [(&'static str, Evaluator); 3] = [
        ("auto", Evaluator::Auto),
        ("native", Evaluator::Native),
        ("tape", Evaluator::Tape),
    ];

    /// The choice named `name` (as on the command line).
    pub fn from_name(name: &str) -> Option<Evaluator> {
        Self::NAMES
            .iter()
            .find(|(n, _)| n.eq_ignore_ascii_case(name))
            .map(|&(_, e)| e)
    }
}

/// Every kernel of one metric on tapes (and natively compiled, when chosen), with the names
/// and parameter values they need.
#[derive(Clone, Debug)]
pub struct TapeSet {
    /// The metric's name.
    pub name: String,
    /// Coordinate names in declared order.
    pub coords: Vec<String>,
    /// Names of the conserved momenta (`p_t`, `p_phi`, ...).
    pub conserved: Vec<String>,
    /// Names of the user's invariants.
    pub invariants: Vec<String>,
    /// Parameter names in declared order.
    pub param_names: Vec<String>,
    /// Parameter values in declared order.
    pub params: Vec<f64>,
    tapes: Vec<Tape>,
    /// The kernels as machine code, in the order of `tapes`, when the native evaluator runs.
    native: Option<Arc<NativeSlots>>,
}

/// The kernels' machine code, each compiled when first asked for (or up front, for
/// [`Evaluator::Native`]); a kernel whose compilation failed runs on its tape.
#[derive(Debug)]
struct NativeSlots {
    programs: Vec<KernelProgram>,
    param_count: usize,
    kernels: Vec<OnceLock<Option<NativeKernel>>>,
}

impl NativeSlots {
    fn get(&self, position: usize) -> Option<&NativeKernel> {
        self.kernels[position]
            .get_or_init(|| NativeKernel::compile(&self.programs[position], self.param_count).ok())
            .as_ref()
    }
}

impl TapeSet {
    /// Compiles every kernel of `kernels` to tapes, with parameter values `params` (declared
    /// order).
    pub fn new(kernels: &KernelSet, params: &[f64]) -> Result<TapeSet, TapeError> {
        let tapes = KernelKind::ALL
            .iter()
            .map(|&k| Tape::compile(kernels.program(k), kernels.params.len()))
            .collect::<Result<Vec<_>, _>>()?;
        Ok(TapeSet {
            name: kernels.name.clone(),
            coords: kernels.coords.clone(),
            conserved: kernels.conserved_names(),
            invariants: kernels.invariant_names.clone(),
            param_names: kernels.params.clone(),
            params: params.to_vec(),
            tapes,
            native: None,
        })
    }

    /// [`new`](Self::new), with the kernels also compiled to machine code when `evaluator`
    /// asks for it. [`Evaluator::Native`] compiles every kernel now and reports any failure;
    /// [`Evaluator::Auto`] compiles the metric kernel now (the tape takes over where this
    /// machine has no code generator) and every other kernel when first evaluated, so a
    /// command pays only for the kernels it runs.
    pub fn with_evaluator(
        kernels: &KernelSet,
        params: &[f64],
        evaluator: Evaluator,
    ) -> Result<TapeSet, CliError> {
        let mut set = TapeSet::new(kernels, params)?;
        let count = kernels.params.len();
        let slots = match evaluator {
            Evaluator::Tape => return Ok(set),
            Evaluator::Native => KernelKind::ALL
                .iter()
                .map(|&k| {
                    Ok(OnceLock::from(Some(NativeKernel::compile(
                        kernels.program(k),
                        count,
                    )?)))
                })
                .collect::<Result<Vec<_>, NativeError>>()?,
            Evaluator::Auto => {
                let probe = match NativeKernel::compile(kernels.program(KernelKind::Metric), count)
                {
                    Ok(metric) => Some(metric),
                    Err(NativeError::Host(_)) => return Ok(set),
                    Err(_) => None,
                };
                KernelKind::ALL
                    .iter()
                    .map(|&k| match k {
                        KernelKind::Metric => OnceLock::from(probe.clone()),
                        _ => OnceLock::new(),
                    })
                    .collect()
            }
        };
        set.native = Some(Arc::new(NativeSlots {
            programs: KernelKind::ALL
                .iter()
                .map(|&k| kernels.program(k).clone())
                .collect(),
            param_count: count,
            kernels: slots,
        }));
        Ok(set)
    }

    /// The evaluator that runs this set's kernels: `"native"` or `"tape"`.
    pub fn evaluator_name(&self) -> &'static str {
        if self.native.is_some() {
            "native"
        } else {
            "tape"
        }
    }

    /// The dimension of the metric.
    pub fn dim(&self) -> usize {
        self.coords.len()
    }

    fn position(kind: KernelKind) -> usize {
        // Tapes and native kernels are built from KernelKind::ALL, so the position exists.
        KernelKind::ALL.iter().position(|k| *k == kind).unwrap_or(0)
    }

    /// The tape of one kernel.
    pub fn tape(&self, kind: KernelKind) -> &Tape {
        &self.tapes[Self::position(kind)]
    }

    /// The machine code of one kernel, when the native evaluator runs (compiled now if it
    /// was not yet).
    pub fn native(&self, kind: KernelKind) -> Option<&NativeKernel> {
        self.native_at(Self::position(kind))
    }

    fn native_at(&self, position: usize) -> Option<&NativeKernel> {
        self.native.as_ref().and_then(|slots| slots.get(position))
    }

    /// Evaluates one kernel into a new vector (convenient, allocating: for one-off values;
    /// [`TapeMetric`] is the allocation-free path).
    pub fn eval(&self, kind: KernelKind, inputs: &Inputs<'_>) -> Vec<f64> {
        let tape = self.tape(kind);
        let mut out = vec![0.0; tape.output_len()];
        match self.native(kind) {
            Some(native) => native.eval(&self.params, inputs, &mut out),
            None => {
                let mut registers = tape.registers(&self.params);
                tape.eval(&mut registers, inputs, &mut out);
            }
        }
        out
    }
}

/// One kernel ready to run: native code when the set has it, else the tape with its register
/// file (borrowed mutably per call).
#[derive(Debug)]
struct Bound<'a> {
    set: &'a TapeSet,
    position: usize,
    registers: RefCell<Registers>,
}

impl Bound<'_> {
    fn eval(&self, inputs: &Inputs<'_>, out: &mut [f64]) {
        match self.set.native_at(self.position) {
            Some(kernel) => kernel.eval(&self.set.params, inputs, out),
            None => {
                // Kernels never call each other, so the borrow cannot be held twice.
                let mut registers = self.registers.borrow_mut();
                self.set.tapes[self.position].eval(&mut registers, inputs, out);
            }
        }
    }
}

/// A [`TapeSet`] at dimension `N`, implementing [`MetricKernels<f64, N>`].
///
/// Holds one register file per tape kernel, so no evaluation allocates. Not `Sync`: give
/// each thread its own view of the shared `TapeSet`.
#[derive(Debug)]
pub struct TapeMetric<'a, const N: usize> {
    coords: Vec<&'a str>,
    conserved_names: Vec<&'a str>,
    invariant_names: Vec<&'a str>,
    kernels: Vec<Bound<'a>>,
}

impl<'a, const N: usize> TapeMetric<'a, N> {
    /// A view of `set`, or `None` if its dimension is not `N`.
    pub fn new(set: &'a TapeSet) -> Option<Self> {
        if set.dim() != N {
            return None;
        }
        let kernels = set
            .tapes
            .iter()
            .enumerate()
            .map(|(position, tape)| Bound {
                set,
                position,
                registers: RefCell::new(tape.registers(&set.params)),
            })
            .collect();
        Some(TapeMetric {
            coords: set.coords.iter().map(String::as_str).collect(),
            conserved_names: set.conserved.iter().map(String::as_str).collect(),
            invariant_names: set.invariants.iter().map(String::as_str).collect(),
            kernels,
        })
    }

    fn kernel(&self, kind: KernelKind) -> &Bound<'a> {
        &self.kernels[TapeSet::position(kind)]
    }
}

impl<const N: usize> MetricKernels<f64, N> for TapeMetric<'_, N> {
    fn coordinate_names(&self) -> &[&str] {
        &self.coords
    }

    fn metric(&self, x: &[f64; N]) -> [[f64; N]; N] {
        let mut g = [[0.0; N]; N];
        let inputs = Inputs {
            x,
            ..Inputs::default()
        };
        self.kernel(KernelKind::Metric)
            .eval(&inputs, g.as_flattened_mut());
        g
    }

    fn inverse_metric(&self, x: &[f64; N]) -> [[f64; N]; N] {
        let mut g = [[0.0; N]; N];
        let inputs = Inputs {
            x,
            ..Inputs::default()
        };
        self.kernel(KernelKind::InverseMetric)
            .eval(&inputs, g.as_flattened_mut());
        g
    }

    fn christoffel(&self, x: &[f64; N]) -> [[[f64; N]; N]; N] {
        let mut gamma = [[[0.0; N]; N]; N];
        let inputs = Inputs {
            x,
            ..Inputs::default()
        };
        let flat = gamma.as_flattened_mut().as_flattened_mut();
        self.kernel(KernelKind::Christoffel).eval(&inputs, flat);
        gamma
    }

    fn geodesic_accel(&self, x: &[f64; N], u: &[f64; N]) -> [f64; N] {
        let mut a = [0.0; N];
        self.kernel(KernelKind::Accel).eval(
            &Inputs {
                x,
                u,
                ..Inputs::default()
            },
            &mut a,
        );
        a
    }

    fn hamilton_rhs(&self, x: &[f64; N], p: &[f64; N]) -> ([f64; N], [f64; N]) {
        let mut both = [[0.0; N]; 2];
        let inputs = Inputs {
            x,
            p,
            ..Inputs::default()
        };
        self.kernel(KernelKind::Hamilton)
            .eval(&inputs, both.as_flattened_mut());
        (both[0], both[1])
    }

    fn parallel_transport(&self, x: &[f64; N], u: &[f64; N], v: &[f64; N]) -> [f64; N] {
        let mut dv = [0.0; N];
        self.kernel(KernelKind::Transport).eval(
            &Inputs {
                x,
                u,
                v,
                ..Inputs::default()
            },
            &mut dv,
        );
        dv
    }

    fn norm(&self, x: &[f64; N], u: &[f64; N]) -> f64 {
        let mut n = [0.0];
        self.kernel(KernelKind::Norm).eval(
            &Inputs {
                x,
                u,
                ..Inputs::default()
            },
            &mut n,
        );
        n[0]
    }

    fn conserved_names(&self) -> &[&str] {
        &self.conserved_names
    }

    fn conserved(&self, x: &[f64; N], u: &[f64; N], out: &mut [f64]) {
        self.kernel(KernelKind::Conserved).eval(
            &Inputs {
                x,
                u,
                ..Inputs::default()
            },
            out,
        );
    }

    fn invariant_names(&self) -> &[&str] {
        &self.invariant_names
    }

    fn invariants(&self, x: &[f64; N], u: &[f64; N], out: &mut [f64]) {
        self.kernel(KernelKind::Invariants).eval(
            &Inputs {
                x,
                u,
                ..Inputs::default()
            },
            out,
        );
    }
}

/// Calls a function generic over a dimension `const N: usize` with the dimension known only
/// at run time (1 to 16, the dimensions a metric may have).
///
/// `with_dimension!(n, f(args..))` expands to a `match` on `n` whose arm for each dimension
/// calls `f::<N>(args..)`; it evaluates to `Some(result)`, or `None` when `n` is out of range.
///
/// ```
/// fn zeros<const N: usize>(scale: f64) -> Vec<f64> { [scale * 0.0; N].to_vec() }
/// let v = geokern_cli::with_dimension!(3, zeros(2.0));
/// assert_eq!(v, Some(vec![0.0; 3]));
/// assert_eq!(geokern_cli::with_dimension!(17, zeros(2.0)), None);
/// ```
#[macro_export]
macro_rules! with_dimension {
    ($n:expr, $f:ident ( $($arg:expr),* $(,)? )) => {
        $crate::with_dimension!(@arms $n, $f, ($($arg),*),
            1 2 3 4 5 6 7 8 9 10 11 12 13 14 15 16)
    };
    (@arms $n:expr, $f:ident, $args:tt, $($d:literal)*) => {
        match $n {
            $( $d => Some($crate::with_dimension!(@call $f, $d, $args)), )*
            _ => None,
        }
    };
    (@call $f:ident, $d:literal, ($($arg:expr),*)) => {
        $f::<$d>($($arg),*)
    };
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::source;

    /// A view of natively compiled kernels returns, bit for bit, what the tape view does.
    #[test]
    fn native_and_tape_views_agree() {
        let text = "struct S { coords: [t, r, phi], params: [k],
            g[t, t] = -(1.0 - k / r); g[r, r] = 1.0 / (1.0 - k / r); g[phi, phi] = r.powi(2);
            g[t, phi] = 0.1 * r * phi.sin(); }";
        let loaded = source::load_bytes("s.gk", text.as_bytes(), None).expect("derives");
        let tape =
            TapeSet::with_evaluator(&loaded.kernels, &[0.5], Evaluator::Tape).expect("tapes");
        let native = TapeSet::with_evaluator(&loaded.kernels, &[0.5], Evaluator::Native)
            .expect("this machine has a code generator");
        assert_eq!(tape.evaluator_name(), "tape");
        assert_eq!(native.evaluator_name(), "native");
        let (a, b) = (
            TapeMetric::<3>::new(&tape).expect("three"),
            TapeMetric::<3>::new(&native).expect("three"),
        );
        let (x, u) = ([0.0, 3.0, 0.2], [1.3, 0.1, 0.05]);
        let bits = |v: &[f64]| v.iter().map(|f| f.to_bits()).collect::<Vec<_>>();
        assert_eq!(
            bits(a.christoffel(&x).as_flattened().as_flattened()),
            bits(b.christoffel(&x).as_flattened().as_flattened())
        );
        assert_eq!(
            bits(&a.geodesic_accel(&x, &u)),
            bits(&b.geodesic_accel(&x, &u))
        );
        assert_eq!(a.norm(&x, &u).to_bits(), b.norm(&x, &u).to_bits());
        assert_eq!(
            bits(&tape.eval(
                KernelKind::InverseMetric,
                &Inputs {
                    x: &x,
                    ..Inputs::default()
                }
            )),
            bits(&native.eval(
                KernelKind::InverseMetric,
                &Inputs {
                    x: &x,
                    ..Inputs::default()
                }
            ))
        );
        assert_eq!(Evaluator::from_name("NATIVE"), Some(Evaluator::Native));
        assert_eq!(Evaluator::from_name("jit"), None);
    }

    /// `auto` compiles a kernel when it first runs, so a command pays only for the kernels
    /// it uses; what it computes is the tape's.
    #[test]
    fn auto_compiles_kernels_when_first_run() {
        let text = "struct S { coords: [t, r], params: [k],
            g[t, t] = -(1.0 - k / r); g[r, r] = 1.0 / (1.0 - k / r); }";
        let loaded = source::load_bytes("s.gk", text.as_bytes(), None).expect("derives");
        let set = TapeSet::with_evaluator(&loaded.kernels, &[0.5], Evaluator::Auto)
            .expect("this machine has a code generator");
        let compiled = |kind| {
            set.native.as_ref().expect("native slots").kernels[TapeSet::position(kind)]
                .get()
                .is_some()
        };
        assert!(compiled(KernelKind::Metric), "the probe");
        assert!(!compiled(KernelKind::Accel) && !compiled(KernelKind::Christoffel));
        let view = TapeMetric::<2>::new(&set).expect("two");
        let (x, u) = ([0.0, 3.0], [1.2, 0.1]);
        let a = view.geodesic_accel(&x, &u);
        assert!(compiled(KernelKind::Accel));
        assert!(
            !compiled(KernelKind::Christoffel),
            "never run, never compiled"
        );
        let tape = TapeSet::new(&loaded.kernels, &[0.5]).expect("tapes");
        let want = TapeMetric::<2>::new(&tape)
            .expect("two")
            .geodesic_accel(&x, &u);
        assert_eq!(a.map(f64::to_bits), want.map(f64::to_bits));
    }

    /// The trait methods return the flat kernel outputs in the documented index order.
    #[test]
    fn trait_methods_lay_out_the_kernels() {
        let text = "struct S { coords: [t, r, phi], params: [k],
            g[t, t] = -(1.0 - k / r); g[r, r] = 1.0 / (1.0 - k / r); g[phi, phi] = r.powi(2);
            g[t, phi] = 0.1 * r;
            invariant e2 = p[t].powi(2); }";
        let loaded = source::load_bytes("s.gk", text.as_bytes(), None).expect("derives");
        let set = TapeSet::new(&loaded.kernels, &[0.5]).expect("tapes");
        let m = TapeMetric::<3>::new(&set).expect("three dimensions");
        assert!(TapeMetric::<4>::new(&set).is_none());
        let (x, u, p, v) = (
            [0.0, 3.0, 0.2],
            [1.3, 0.1, 0.05],
            [-1.0, 0.2, 2.0],
            [0.3, -0.1, 0.7],
        );
        let flat = |kind, inputs: Inputs<'_>| set.eval(kind, &inputs);
        let at_x = Inputs {
            x: &x,
            ..Inputs::default()
        };
        assert_eq!(m.metric(&x).as_flattened(), flat(KernelKind::Metric, at_x));
        assert_eq!(
            m.inverse_metric(&x).as_flattened(),
            flat(KernelKind::InverseMetric, at_x)
        );
        let gamma = flat(KernelKind::Christoffel, at_x);
        let g = m.christoffel(&x);
        for a in 0..3 {
            for b in 0..3 {
                for c in 0..3 {
                    assert_eq!(g[a][b][c], gamma[(a * 3 + b) * 3 + c]);
                }
            }
        }
        // Γ^r_φφ does not vanish here, so the loop above compared real values.
        assert!(g[1][2][2] != 0.0);
        let with_u = Inputs {
            x: &x,
            u: &u,
            ..Inputs::default()
        };
        assert_eq!(
            m.geodesic_accel(&x, &u).to_vec(),
            flat(KernelKind::Accel, with_u)
        );
        assert_eq!(vec![m.norm(&x, &u)], flat(KernelKind::Norm, with_u));
        let (dx, dp) = m.hamilton_rhs(&x, &p);
        let both = flat(
            KernelKind::Hamilton,
            Inputs {
                x: &x,
                p: &p,
                ..Inputs::default()
            },
        );
        assert_eq!([dx.to_vec(), dp.to_vec()].concat(), both);
        let dv = m.parallel_transport(&x, &u, &v);
        assert_eq!(
            dv.to_vec(),
            flat(
                KernelKind::Transport,
                Inputs {
                    x: &x,
                    u: &u,
                    p: &[],
                    v: &v
                }
            )
        );
        assert_eq!(m.coordinate_names(), ["t", "r", "phi"]);
        assert_eq!(m.conserved_names(), ["p_t", "p_phi"]);
        let mut conserved = [0.0; 2];
        m.conserved(&x, &u, &mut conserved);
        assert_eq!(conserved.to_vec(), flat(KernelKind::Conserved, with_u));
        assert_eq!(m.invariant_names(), ["e2"]);
        let mut e2 = [0.0];
        m.invariants(&x, &u, &mut e2);
        assert_eq!(e2.to_vec(), flat(KernelKind::Invariants, with_u));
        // p_t = g_tt u^t + g_tphi u^phi, and the invariant is its square.
        let g = m.metric(&x);
        let p_t = g[0][0] * u[0] + g[0][2] * u[2];
        assert!((conserved[0] - p_t).abs() < 1e-15);
        assert!((e2[0] - p_t * p_t).abs() < 1e-14);
    }
}
