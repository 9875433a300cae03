//! The example metrics with SymPy reference data, one test each: shared by the macro's
//! reference tests (`tests/sympy_reference.rs`) and the tool's (`cli/tests/reference.rs`),
//! so that both always cover the same metrics.

/// Expands to one `#[test]` per example metric with reference data, each calling
/// `$check(stem, make)` where `make` builds the metric from its parameter values. The metric
/// types come from `geokern::include_metric!` at the call site.
macro_rules! test_each_example {
    ($check:ident) => {
        #[test]
        fn schwarzschild() {
            $check("schwarzschild", |p| Schwarzschild::new(p[0]));
        }

        #[test]
        fn kerr_boyer_lindquist() {
            $check("kerr_bl", |p| Kerr::new(p[0], p[1]));
        }

        #[test]
        fn kerr_schild_dense() {
            $check("kerr_schild", |p| KerrSchild::new(p[0], p[1]));
        }

        #[test]
        fn kerr_schild_with_declared_inverse() {
            $check("kerr_schild_ginv", |p| KerrSchildInv::new(p[0], p[1]));
        }

        #[test]
        fn flrw_power_law() {
            $check("flrw", |p| Flrw::new(p[0]));
        }

        #[test]
        fn round_sphere() {
            $check("sphere", |p| Sphere::new(p[0]));
        }

        #[test]
        fn tangherlini_five_dimensions() {
            $check("tangherlini", |p| Tangherlini5::new(p[0]));
        }

        #[test]
        fn twisted_shear_riemannian() {
            $check("twisted_shear", |p| TwistedShear::new(p[0], p[1]));
        }

        #[test]
        fn ellis_wormhole() {
            $check("ellis_wormhole", |p| EllisWormhole::new(p[0]));
        }
    };
}
