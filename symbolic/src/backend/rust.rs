//! The Rust backend: a generic struct with one branch-free method per kernel.
//!
//! The emitted code depends only on the runtime's `Scalar`, `MetricKernels` and `OpCount`
//! (through the path given in [`RustOptions::runtime`]), never on this engine.

use proc_macro2::{Ident, Literal, Span, TokenStream};
use quote::{format_ident, quote};

use crate::expr::{q_to_f64, NamedConst};
use crate::kernels::KernelSet;
use crate::program::{InputArray, Instr, KernelKind, KernelProgram};

/// How the generated items are dressed: visibility, extra attributes, runtime path.
#[derive(Clone, Debug)]
pub struct RustOptions {
    /// Visibility of the struct and its fields (`pub`, `pub(crate)`, nothing).
    pub vis: TokenStream,
    /// Outer attributes to put on the struct (a user's `#[derive(..)]`, say).
    pub attrs: Vec<TokenStream>,
    /// Path of the crate that re-exports the runtime (`::geokern`).
    pub runtime: TokenStream,
}

impl Default for RustOptions {
    fn default() -> Self {
        RustOptions {
            vis: quote!(pub),
            attrs: Vec::new(),
            runtime: quote!(::geokern),
        }
    }
}

/// Emits the struct, its inherent kernels and its `MetricKernels` implementation.
pub fn emit(ks: &KernelSet, opts: &RustOptions) -> TokenStream {
    let name = Ident::new(&ks.name, Span::call_site());
    let vis = &opts.vis;
    let rt = &opts.runtime;
    let attrs = &opts.attrs;
    let n = ks.dim();
    let n_lit = Literal::usize_unsuffixed(n);
    let params: Vec<Ident> = ks.params.iter().map(|p| format_ident!("{}", p)).collect();
    let param_docs: Vec<String> = ks
        .params
        .iter()
        .map(|p| format!("Parameter `{p}`."))
        .collect();
    let coords = &ks.coords;
    let pnames = &ks.params;
    let conserved = ks.conserved_names();
    let n_cons = Literal::usize_unsuffixed(conserved.len());
    let n_inv = Literal::usize_unsuffixed(ks.invariant_names.len());
    let inv_names = &ks.invariant_names;
    let n_params = Literal::usize_unsuffixed(ks.params.len());
    let struct_docs = struct_docs(ks);
    // A metric without parameters still needs T in a field.
    let (phantom_field, phantom_init) = if params.is_empty() {
        (
            quote!(_scalar: ::core::marker::PhantomData<T>,),
            quote!(_scalar: ::core::marker::PhantomData),
        )
    } else {
        (TokenStream::new(), TokenStream::new())
    };

    let kernel = |kind: KernelKind| {
        let p = ks.program(kind);
        (body(p, &params, rt), ops_const(p, rt), doc_ops(p))
    };
    let (metric_body, metric_ops, metric_doc) = kernel(KernelKind::Metric);
    let (inverse_body, inverse_ops, inverse_doc) = kernel(KernelKind::InverseMetric);
    let (chris_body, chris_ops, chris_doc) = kernel(KernelKind::Christoffel);
    let (accel_body, accel_ops, accel_doc) = kernel(KernelKind::Accel);
    let (ham_body, ham_ops, ham_doc) = kernel(KernelKind::Hamilton);
    let (tr_body, tr_ops, tr_doc) = kernel(KernelKind::Transport);
    let (norm_body, norm_ops, norm_doc) = kernel(KernelKind::Norm);
    let (cons_body, cons_ops, cons_doc) = kernel(KernelKind::Conserved);
    let (inv_body, inv_ops, inv_doc) = kernel(KernelKind::Invariants);

    let momentum_fns = ks.cyclic.iter().enumerate().map(|(i, &k)| {
        let f = format_ident!("momentum_{}", ks.coords[k]);
        let doc = format!(
            "The momentum p_{c} = g_{c}b u^b, conserved along geodesics because the metric does \
             not depend on `{c}`.",
            c = ks.coords[k]
        );
        let i = Literal::usize_unsuffixed(i);
        quote! {
            #[doc = #doc]
            #[inline]
            pub fn #f(&self, x: &[T; #n_lit], u: &[T; #n_lit]) -> T {
                self.conserved(x, u)[#i]
            }
        }
    });
    let invariant_fns = ks.invariant_names.iter().enumerate().map(|(i, nm)| {
        let f = format_ident!("invariant_{}", nm);
        let doc = format!("The declared invariant `{nm}` at (x, u).");
        let i = Literal::usize_unsuffixed(i);
        quote! {
            #[doc = #doc]
            #[inline]
            pub fn #f(&self, x: &[T; #n_lit], u: &[T; #n_lit]) -> T {
                self.invariants(x, u)[#i]
            }
        }
    });
    let curvature_fns = curvature_methods(ks, &params, rt);
    let new_doc = format!(
        "A `{}` with the given parameters, in declared order.",
        ks.name
    );

    quote! {
        #(#struct_docs)*
        #(#attrs)*
        #[derive(Clone, Copy, Debug, PartialEq)]
        #vis struct #name<T = f64> {
            #( #[doc = #param_docs] pub #params: T, )*
            #phantom_field
        }

        #[allow(clippy::all, clippy::pedantic, clippy::nursery, unused_parens)]
        impl<T: #rt::Scalar> #name<T> {
            /// Number of coordinates.
            pub const DIM: usize = #n_lit;
            /// Coordinate names in declared order.
            pub const COORDS: [&'static str; #n_lit] = [#(#coords),*];
            /// Parameter names in declared order.
            pub const PARAMS: [&'static str; #n_params] = [#(#pnames),*];
            /// Names of the conserved momenta, one per coordinate the metric does not depend on.
            pub const CONSERVED: [&'static str; #n_cons] = [#(#conserved),*];
            /// Names of the declared invariants.
            pub const INVARIANTS: [&'static str; #n_inv] = [#(#inv_names),*];
            /// Operation counts of [`metric`](Self::metric).
            pub const METRIC_OPS: #rt::OpCount = #metric_ops;
            /// Operation counts of [`inverse_metric`](Self::inverse_metric).
            pub const INVERSE_METRIC_OPS: #rt::OpCount = #inverse_ops;
            /// Operation counts of [`christoffel`](Self::christoffel).
            pub const CHRISTOFFEL_OPS: #rt::OpCount = #chris_ops;
            /// Operation counts of [`geodesic_accel`](Self::geodesic_accel).
            pub const ACCEL_OPS: #rt::OpCount = #accel_ops;
            /// Operation counts of [`hamilton_rhs`](Self::hamilton_rhs).
            pub const HAMILTON_OPS: #rt::OpCount = #ham_ops;
            /// Operation counts of [`parallel_transport`](Self::parallel_transport).
            pub const TRANSPORT_OPS: #rt::OpCount = #tr_ops;
            /// Operation counts of [`norm`](Self::norm).
            pub const NORM_OPS: #rt::OpCount = #norm_ops;
            /// Operation counts of [`conserved`](Self::conserved).
            pub const CONSERVED_OPS: #rt::OpCount = #cons_ops;
            /// Operation counts of [`invariants`](Self::invariants).
            pub const INVARIANTS_OPS: #rt::OpCount = #inv_ops;

            #[doc = #new_doc]
            #[inline]
            pub const fn new(#(#params: T),*) -> Self {
                Self { #(#params,)* #phantom_init }
            }

            /// The metric g_ab at `x`.
            #[doc = #metric_doc]
            #[inline]
            pub fn metric(&self, x: &[T; #n_lit]) -> [[T; #n_lit]; #n_lit] { #metric_body }

            /// The inverse metric g^ab at `x`.
            #[doc = #inverse_doc]
            #[inline]
            pub fn inverse_metric(&self, x: &[T; #n_lit]) -> [[T; #n_lit]; #n_lit] { #inverse_body }

            /// The Christoffel symbols Γ^a_bc at `x`, index order `[a][b][c]`.
            #[doc = #chris_doc]
            #[inline]
            pub fn christoffel(&self, x: &[T; #n_lit]) -> [[[T; #n_lit]; #n_lit]; #n_lit] {
                #chris_body
            }

            /// The geodesic acceleration −Γ^a_bc u^b u^c, computed by contracting ∂g with u
            /// before raising the index (no Γ array is formed).
            #[doc = #accel_doc]
            #[inline]
            pub fn geodesic_accel(&self, x: &[T; #n_lit], u: &[T; #n_lit]) -> [T; #n_lit] {
                #accel_body
            }

            /// Hamilton's equations for H = g^ab p_a p_b / 2: returns (dx/dλ, dp/dλ).
            #[doc = #ham_doc]
            #[inline]
            pub fn hamilton_rhs(&self, x: &[T; #n_lit], p: &[T; #n_lit]) -> ([T; #n_lit], [T; #n_lit]) {
                let out: [[T; #n_lit]; 2] = { #ham_body };
                (out[0], out[1])
            }

            /// Parallel transport of `v` along `u`: dv^a/dλ = −Γ^a_bc u^b v^c.
            #[doc = #tr_doc]
            #[inline]
            pub fn parallel_transport(&self, x: &[T; #n_lit], u: &[T; #n_lit], v: &[T; #n_lit]) -> [T; #n_lit] {
                #tr_body
            }

            /// The norm g_ab u^a u^b (−1 for a unit timelike vector, 0 for a null one).
            #[doc = #norm_doc]
            #[inline]
            pub fn norm(&self, x: &[T; #n_lit], u: &[T; #n_lit]) -> T { #norm_body }

            /// The conserved momenta, in the order of [`CONSERVED`](Self::CONSERVED).
            #[doc = #cons_doc]
            #[inline]
            pub fn conserved(&self, x: &[T; #n_lit], u: &[T; #n_lit]) -> [T; #n_cons] { #cons_body }

            /// The declared invariants, in the order of [`INVARIANTS`](Self::INVARIANTS).
            #[doc = #inv_doc]
            #[inline]
            pub fn invariants(&self, x: &[T; #n_lit], u: &[T; #n_lit]) -> [T; #n_inv] { #inv_body }

            #(#momentum_fns)*
            #(#invariant_fns)*
            #curvature_fns
        }

        impl<T: #rt::Scalar> #rt::MetricKernels<T, #n_lit> for #name<T> {
            fn coordinate_names(&self) -> &[&str] { &Self::COORDS }
            fn metric(&self, x: &[T; #n_lit]) -> [[T; #n_lit]; #n_lit] { #name::metric(self, x) }
            fn inverse_metric(&self, x: &[T; #n_lit]) -> [[T; #n_lit]; #n_lit] {
                #name::inverse_metric(self, x)
            }
            fn christoffel(&self, x: &[T; #n_lit]) -> [[[T; #n_lit]; #n_lit]; #n_lit] {
                #name::christoffel(self, x)
            }
            fn geodesic_accel(&self, x: &[T; #n_lit], u: &[T; #n_lit]) -> [T; #n_lit] {
                #name::geodesic_accel(self, x, u)
            }
            fn hamilton_rhs(&self, x: &[T; #n_lit], p: &[T; #n_lit]) -> ([T; #n_lit], [T; #n_lit]) {
                #name::hamilton_rhs(self, x, p)
            }
            fn parallel_transport(&self, x: &[T; #n_lit], u: &[T; #n_lit], v: &[T; #n_lit]) -> [T; #n_lit] {
                #name::parallel_transport(self, x, u, v)
            }
            fn norm(&self, x: &[T; #n_lit], u: &[T; #n_lit]) -> T { #name::norm(self, x, u) }
            fn conserved_names(&self) -> &[&str] { &Self::CONSERVED }
            fn conserved(&self, x: &[T; #n_lit], u: &[T; #n_lit], out: &mut [T]) {
                for (o, v) in out.iter_mut().zip(#name::conserved(self, x, u)) { *o = v; }
            }
            fn invariant_names(&self) -> &[&str] { &Self::INVARIANTS }
            fn invariants(&self, x: &[T; #n_lit], u: &[T; #n_lit], out: &mut [T]) {
                for (o, v) in out.iter_mut().zip(#name::invariants(self, x, u)) { *o = v; }
            }
        }
    }
}

/// The opt-in curvature kernels (`options: [curvature]`), or nothing.
fn curvature_methods(ks: &KernelSet, params: &[Ident], rt: &TokenStream) -> TokenStream {
    if !ks.has_curvature() {
        return TokenStream::new();
    }
    let n = Literal::usize_unsuffixed(ks.dim());
    let mut out = TokenStream::new();
    for kind in KernelKind::CURVATURE {
        let Some(p) = ks.try_program(kind) else {
            continue;
        };
        let b = body(p, params, rt);
        let ops = doc_ops(p);
        let c = ops_const(p, rt);
        let (name, doc, args, ret) = match kind {
            KernelKind::Riemann => (
                "riemann",
                "The Riemann tensor R^a_bcd at `x`, index order `[a][b][c][d]` (R^a_bcd = ∂_c Γ^a_db − ∂_d Γ^a_cb + Γ^a_ce Γ^e_db − Γ^a_de Γ^e_cb).",
                quote!(x: &[T; #n]),
                quote!([[[[T; #n]; #n]; #n]; #n]),
            ),
            KernelKind::Ricci => (
                "ricci",
                "The Ricci tensor R_bd = R^a_bad at `x`.",
                quote!(x: &[T; #n]),
                quote!([[T; #n]; #n]),
            ),
            KernelKind::RicciScalar => {
                ("ricci_scalar", "The Ricci scalar R = g^bd R_bd at `x`.", quote!(x: &[T; #n]), quote!(T))
            }
            KernelKind::Einstein => (
                "einstein",
                "The Einstein tensor G_ab = R_ab − ½ g_ab R at `x`.",
                quote!(x: &[T; #n]),
                quote!([[T; #n]; #n]),
            ),
            KernelKind::Kretschmann => (
                "kretschmann",
                "The Kretschmann scalar R_abcd R^abcd at `x`.",
                quote!(x: &[T; #n]),
                quote!(T),
            ),
            _ => (
                "geodesic_deviation",
                "The geodesic-deviation right-hand side D²ξ^a/dλ² = −R^a_bcd u^b ξ^c u^d for a separation `v` = ξ along velocity `u`.",
                quote!(x: &[T; #n], u: &[T; #n], v: &[T; #n]),
                quote!([T; #n]),
            ),
        };
        let f = format_ident!("{}", name);
        let ops_name = format_ident!("{}_OPS", name.to_uppercase());
        let ops_doc = format!("Operation counts of [`{name}`](Self::{name}).");
        out.extend(quote! {
            #[doc = #ops_doc]
            pub const #ops_name: #rt::OpCount = #c;
            #[doc = #doc]
            #[doc = #ops]
            #[inline]
            pub fn #f(&self, #args) -> #ret { #b }
        });
    }
    out
}

fn struct_docs(ks: &KernelSet) -> Vec<TokenStream> {
    let mut lines: Vec<String> = ks.docs.iter().map(|d| format!(" {}", d.trim())).collect();
    if !lines.is_empty() {
        lines.push(String::new());
    }
    lines.push(format!(
        " Coordinates ({}): {}. Parameters: {}.",
        ks.dim(),
        ks.coords.join(", "),
        if ks.params.is_empty() {
            "none".to_string()
        } else {
            ks.params.join(", ")
        }
    ));
    lines.push(String::new());
    lines.push(" Kernels generated by `geokern::metric!`: exact symbolic derivation, common-subexpression elimination, branch-free straight-line code.".to_string());
    lines.iter().map(|l| quote!(#[doc = #l])).collect()
}

fn doc_ops(p: &KernelProgram) -> String {
    format!(
        "\n\nBranch-free; {} after common-subexpression elimination.",
        p.op_counts()
    )
}

fn ops_const(p: &KernelProgram, rt: &TokenStream) -> TokenStream {
    let c = p.op_counts();
    let (a, m, d, f) = (c.add, c.mul, c.div, c.call);
    quote!(#rt::OpCount { add: #a, mul: #m, div: #d, call: #f })
}

/// The statements and the output expression of one kernel.
fn body(p: &KernelProgram, params: &[Ident], rt: &TokenStream) -> TokenStream {
    let v = |i: u32| format_ident!("v{}", i);
    let pairs = p.sin_cos_pairs();
    let mut stmts = Vec::with_capacity(p.instrs.len());
    for (i, ins) in p.instrs.iter().enumerate() {
        let i = i as u32;
        let dst = v(i);
        if let Some(&(s, c)) = pairs.iter().find(|(s, c)| *s == i || *c == i) {
            if i == s.min(c) {
                let (sv, cv) = (v(s), v(c));
                let arg = match &p.instrs[s as usize] {
                    Instr::Call(_, a) => v(*a),
                    _ => dst.clone(),
                };
                stmts.push(quote!(let (#sv, #cv) = #rt::Scalar::sin_cos(#arg);));
            }
            continue;
        }
        let rhs = match ins {
            Instr::Input(InputArray::Params, k) => {
                let f = &params[*k as usize];
                quote!(self.#f)
            }
            Instr::Input(arr, k) => {
                let a = format_ident!("{}", arr.name());
                let k = Literal::usize_unsuffixed(*k as usize);
                quote!(#a[#k])
            }
            Instr::Const(q) => {
                let lit = Literal::f64_unsuffixed(q_to_f64(q));
                quote!(<T as #rt::Scalar>::from_f64(#lit))
            }
            Instr::Named(NamedConst::Pi) => {
                quote!(<T as #rt::Scalar>::from_f64(::core::f64::consts::PI))
            }
            Instr::Named(NamedConst::E) => {
                quote!(<T as #rt::Scalar>::from_f64(::core::f64::consts::E))
            }
            Instr::Add(a, b) => binary(v(*a), quote!(+), v(*b)),
            Instr::Sub(a, b) => binary(v(*a), quote!(-), v(*b)),
            Instr::Mul(a, b) => binary(v(*a), quote!(*), v(*b)),
            Instr::Div(a, b) => binary(v(*a), quote!(/), v(*b)),
            Instr::Neg(a) => {
                let a = v(*a);
                quote!(-#a)
            }
            Instr::Sqrt(a) => {
                let a = v(*a);
                quote!(#rt::Scalar::sqrt(#a))
            }
            Instr::Call(f, a) => {
                let a = v(*a);
                let f = format_ident!("{}", f.name());
                quote!(#rt::Scalar::#f(#a))
            }
            Instr::Powf(a, b) => {
                let (a, b) = (v(*a), v(*b));
                quote!(#rt::Scalar::powf(#a, #b))
            }
        };
        stmts.push(quote!(let #dst = #rhs;));
    }
    let out = nest(&p.outputs, &p.shape, &v);
    quote!( #(#stmts)* #out )
}

fn binary(a: Ident, op: TokenStream, b: Ident) -> TokenStream {
    quote!(#a #op #b)
}

/// Nested array literal of the flattened outputs.
fn nest(outs: &[u32], shape: &[usize], v: &dyn Fn(u32) -> Ident) -> TokenStream {
    match shape.split_first() {
        None => {
            let o = v(outs[0]);
            quote!(#o)
        }
        Some((&len, rest)) => {
            let stride: usize = rest.iter().product();
            let items = (0..len).map(|i| nest(&outs[i * stride..(i + 1) * stride], rest, v));
            quote!([#(#items),*])
        }
    }
}

/// The shape of a metric the macro could not compile: enough to give the struct its fields
/// and every method its signature, so that one error is reported instead of a cascade.
#[derive(Clone, Debug)]
pub struct StubShape {
    /// Struct name.
    pub name: String,
    /// Number of coordinates (1 when unknown).
    pub dim: usize,
    /// Parameter names.
    pub params: Vec<String>,
}

/// A struct with the right fields and signatures whose bodies never run: emitted next to the
/// `compile_error!` of a declaration that failed, so the user's code still type-checks
/// against it and only the real error is shown.
pub fn emit_stub(shape: &StubShape, opts: &RustOptions) -> TokenStream {
    let name = Ident::new(&shape.name, Span::call_site());
    let vis = &opts.vis;
    let rt = &opts.runtime;
    let n = Literal::usize_unsuffixed(shape.dim.max(1));
    let params: Vec<Ident> = shape
        .params
        .iter()
        .map(|p| format_ident!("{}", p))
        .collect();
    quote! {
        #[allow(dead_code, missing_docs)]
        #vis struct #name<T = f64> { #( pub #params: T, )* _scalar: ::core::marker::PhantomData<T> }
        #[allow(dead_code, missing_docs, unused_variables, clippy::all)]
        impl<T: #rt::Scalar> #name<T> {
            pub const DIM: usize = #n;
            pub fn new(#(#params: T),*) -> Self {
                Self { #(#params,)* _scalar: ::core::marker::PhantomData }
            }
            pub fn metric(&self, x: &[T; #n]) -> [[T; #n]; #n] { unimplemented!() }
            pub fn inverse_metric(&self, x: &[T; #n]) -> [[T; #n]; #n] { unimplemented!() }
            pub fn christoffel(&self, x: &[T; #n]) -> [[[T; #n]; #n]; #n] { unimplemented!() }
            pub fn geodesic_accel(&self, x: &[T; #n], u: &[T; #n]) -> [T; #n] { unimplemented!() }
            pub fn hamilton_rhs(&self, x: &[T; #n], p: &[T; #n]) -> ([T; #n], [T; #n]) { unimplemented!() }
            pub fn parallel_transport(&self, x: &[T; #n], u: &[T; #n], v: &[T; #n]) -> [T; #n] { unimplemented!() }
            pub fn norm(&self, x: &[T; #n], u: &[T; #n]) -> T { unimplemented!() }
        }
    }
}
