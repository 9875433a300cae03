//! The complete set of kernels of one metric: derivation followed by lowering.

use crate::expr::ExprId;
use crate::geometry::{derive, Derivation, InverseError, MetricModel};
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
    /// One program per kernel, in [`KernelKind::ALL`] order.
    pub programs: Vec<KernelProgram>,
}

impl KernelSet {
    /// Dimension of the metric.
    pub fn dim(&self) -> usize {
        self.coords.len()
    }

    /// The program of one kernel.
    pub fn program(&self, kind: KernelKind) -> &KernelProgram {
        // `programs` is built from KernelKind::ALL, so every kind is present.
        &self.programs[KernelKind::ALL.iter().position(|k| *k == kind).unwrap_or(0)]
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
    Ok(lower_all(model, &d))
}

fn lower_all(model: &MetricModel, d: &Derivation) -> KernelSet {
    let n = model.dim();
    let s = &model.store;
    let flat2 = |m: &[Vec<ExprId>]| m.iter().flatten().copied().collect::<Vec<_>>();
    let programs = KernelKind::ALL
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
            };
            lower(s, kind, n, &outs, shape)
        })
        .collect();
    KernelSet {
        name: model.name.clone(),
        docs: model.docs.clone(),
        coords: model.coords.clone(),
        params: model.params.clone(),
        cyclic: d.conserved.iter().map(|c| c.0).collect(),
        invariant_names: d.invariants.iter().map(|c| c.0.clone()).collect(),
        programs,
    }
}
