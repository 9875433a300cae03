//! The complete set of kernels of one metric: derivation followed by lowering.

use crate::expr::ExprId;
use crate::geometry::{
    derive, derive_curvature, zero_status, Curvature, Derivation, InverseError, MetricModel,
    ZeroStatus,
};
use crate::program::{lower, KernelKind, KernelProgram};

/// Every kernel program of a metric, with what backends need to name and document them.
#[derive(Clone, Debug)]
pub struct KernelSet {
    /// Struct name.
    pub name: String,
    /// Doc lines of the declaration.
    pub docs: Vec<String>,
    /// Coordinate names.
    pub coords: Vec<String>,
    /// Parameter names.
    pub params: Vec<String>,
    /// Coordinates the metric does not depend on; each has a conserved momentum.
    pub cyclic: Vec<usize>,
    /// Names of the user's invariants.
    pub invariant_names: Vec<String>,
    /// One program per kernel, in [`KernelKind::ALL`] order, then the
    /// [`KernelKind::CURVATURE`] programs when the declaration asked for them.
    pub programs: Vec<KernelProgram>,
    /// For curvature-enabled metrics: each independent Ricci component `(a, b)` with a ≤ b,
    /// and whether it vanishes (so a user sees at once whether a metric is a vacuum solution).
    pub ricci_zeros: Vec<((usize, usize), ZeroStatus)>,
    /// For curvature-enabled metrics: whether the Ricci scalar vanishes.
    pub ricci_scalar_zero: Option<ZeroStatus>,
}

impl KernelSet {
    /// Dimension of the metric.
    pub fn dim(&self) -> usize {
        self.coords.len()
    }

    /// The program of one of the [`KernelKind::ALL`] kernels (always present).
    pub fn program(&self, kind: KernelKind) -> &KernelProgram {
        self.try_program(kind).unwrap_or(&self.programs[0])
    }

    /// The program of a kernel, if this set has it (curvature kernels are opt-in).
    pub fn try_program(&self, kind: KernelKind) -> Option<&KernelProgram> {
        self.programs.iter().find(|p| p.kind == kind)
    }

    /// Whether the curvature kernels were generated.
    pub fn has_curvature(&self) -> bool {
        self.try_program(KernelKind::Riemann).is_some()
    }

    /// Names of the conserved momenta (`p_t`, `p_phi`, …).
    pub fn conserved_names(&self) -> Vec<String> {
        self.cyclic
            .iter()
            .map(|&k| format!("p_{}", self.coords[k]))
            .collect()
    }
}

/// Derives and lowers every kernel of `model`.
pub fn build(model: &mut MetricModel) -> Result<KernelSet, InverseError> {
    let d = derive(model)?;
    let curvature = model.curvature.then(|| derive_curvature(model, &d));
    Ok(lower_all(model, &d, curvature.as_ref()))
}

fn lower_all(model: &MetricModel, d: &Derivation, curv: Option<&Curvature>) -> KernelSet {
    let n = model.dim();
    let s = &model.store;
    let flat2 = |m: &[Vec<ExprId>]| m.iter().flatten().copied().collect::<Vec<_>>();
    let mut programs: Vec<KernelProgram> = KernelKind::ALL
        .iter()
        .map(|&kind| {
            let (outs, shape) = match kind {
                KernelKind::Metric => (flat2(&model.metric), vec![n, n]),
                KernelKind::InverseMetric => (flat2(&d.inverse), vec![n, n]),
                KernelKind::Christoffel => (
                    d.christoffel.iter().flatten().flatten().copied().collect(),
                    vec![n, n, n],
                ),
                KernelKind::Accel => (d.accel.clone(), vec![n]),
                KernelKind::Hamilton => {
                    let mut o = d.hamilton_dx.clone();
                    o.extend(&d.hamilton_dp);
                    (o, vec![2, n])
                }
                KernelKind::Transport => (d.transport.clone(), vec![n]),
                KernelKind::Norm => (vec![d.norm], vec![]),
                KernelKind::Conserved => (
                    d.conserved.iter().map(|c| c.1).collect(),
                    vec![d.conserved.len()],
                ),
                KernelKind::Invariants => (
                    d.invariants.iter().map(|c| c.1).collect(),
                    vec![d.invariants.len()],
                ),
                _ => (Vec::new(), vec![0]),
            };
            let program = lower(s, kind, n, &outs, shape.clone());
            // Another route to the same values: keep whichever schedules to fewer operations
            // (ties keep the first, so the choice is deterministic).
            let other: Option<Vec<ExprId>> = match kind {
                KernelKind::Accel => Some(d.accel_by_components.clone()),
                KernelKind::Hamilton => {
                    let mut o = d.hamilton_dx.clone();
                    o.extend(&d.hamilton_dp_by_momentum);
                    Some(o)
                }
                KernelKind::Norm => Some(vec![d.norm_by_momentum]),
                _ => None,
            };
            match other {
                Some(outs) => {
                    let alternative = lower(s, kind, n, &outs, shape);
                    if alternative.op_counts().total() < program.op_counts().total() {
                        alternative
                    } else {
                        program
                    }
                }
                None => program,
            }
        })
        .collect();
    let mut ricci_zeros = Vec::new();
    let mut ricci_scalar_zero = None;
    if let Some(c) = curv {
        for kind in KernelKind::CURVATURE {
            let (outs, shape) = match kind {
                KernelKind::Riemann => (
                    c.riemann
                        .iter()
                        .flatten()
                        .flatten()
                        .flatten()
                        .copied()
                        .collect(),
                    vec![n, n, n, n],
                ),
                KernelKind::Ricci => (flat2(&c.ricci), vec![n, n]),
                KernelKind::RicciScalar => (vec![c.ricci_scalar], vec![]),
                KernelKind::Einstein => (flat2(&c.einstein), vec![n, n]),
                KernelKind::Kretschmann => (vec![c.kretschmann], vec![]),
                _ => (c.deviation.clone(), vec![n]),
            };
            programs.push(lower(s, kind, n, &outs, shape));
        }
        for a in 0..n {
            for b in a..n {
                ricci_zeros.push(((a, b), zero_status(s, c.ricci[a][b], model.prove_zeros)));
            }
        }
        ricci_scalar_zero = Some(zero_status(s, c.ricci_scalar, model.prove_zeros));
    }
    KernelSet {
        name: model.name.clone(),
        docs: model.docs.clone(),
        coords: model.coords.clone(),
        params: model.params.clone(),
        cyclic: d.conserved.iter().map(|c| c.0).collect(),
        invariant_names: d.invariants.iter().map(|c| c.0.clone()).collect(),
        programs,
        ricci_zeros,
        ricci_scalar_zero,
    }
}
