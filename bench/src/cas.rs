//! The general computer-algebra route: C that `scripts/cas_route.py` printed with SymPy
//! (`bench/cas/*.c`), compiled at `-O3` by `build.rs`, behind safe wrappers.

use crate::Route;

// The signatures `scripts/cas_route.py` prints: params = (m, a), x and u of length 4, out of
// length 64 (Christoffel, index 16a + 4b + c) or 4 (acceleration).
extern "C" {
    fn kerr_bl_christoffel(params: *const f64, x: *const f64, out: *mut f64);
    fn kerr_bl_geodesic_accel(params: *const f64, x: *const f64, u: *const f64, out: *mut f64);
    fn kerr_schild_christoffel(params: *const f64, x: *const f64, out: *mut f64);
    fn kerr_schild_geodesic_accel(params: *const f64, x: *const f64, u: *const f64, out: *mut f64);
}

macro_rules! cas_metric {
    ($(#[$doc:meta])* $name:ident, $christoffel:ident, $accel:ident) => {
        $(#[$doc])*
        #[derive(Clone, Copy, Debug, PartialEq)]
        pub struct $name {
            params: [f64; 2],
        }

        impl $name {
            /// The metric with mass `m` and spin `a`.
            pub const fn new(m: f64, a: f64) -> Self {
                Self { params: [m, a] }
            }
        }

        impl Route for $name {
            #[inline]
            fn christoffel(&self, x: &[f64; 4]) -> [[[f64; 4]; 4]; 4] {
                let mut out = [[[0.0; 4]; 4]; 4];
                // SAFETY: the C function reads 2 params and 4 coordinates and writes exactly
                // 64 doubles, which `out` holds contiguously; it keeps no pointer.
                unsafe {
                    $christoffel(
                        self.params.as_ptr(),
                        x.as_ptr(),
                        out.as_flattened_mut().as_flattened_mut().as_mut_ptr(),
                    )
                };
                out
            }
            #[inline]
            fn geodesic_accel(&self, x: &[f64; 4], u: &[f64; 4]) -> [f64; 4] {
                let mut out = [0.0; 4];
                // SAFETY: the C function reads 2 params, 4 coordinates and 4 velocity
                // components and writes exactly 4 doubles; it keeps no pointer.
                unsafe { $accel(self.params.as_ptr(), x.as_ptr(), u.as_ptr(), out.as_mut_ptr()) };
                out
            }
        }
    };
}

cas_metric!(
    /// Kerr in Boyer-Lindquist coordinates (t, r, θ, φ) by the computer-algebra route.
    CasKerrBl,
    kerr_bl_christoffel,
    kerr_bl_geodesic_accel
);
cas_metric!(
    /// Kerr in Cartesian Kerr-Schild coordinates (t, x, y, z) by the computer-algebra route.
    CasKerrSchild,
    kerr_schild_christoffel,
    kerr_schild_geodesic_accel
);
