//! The scalar type every generated kernel is generic over.
//!
//! Kernels use nothing but the four field operations, negation, and the functions listed
//! here, so any type that provides them (f64, f32, dual numbers, SIMD lanes) can run them.

use core::ops::{Add, Div, Mul, Neg, Sub};

/// A real-number-like type that generated kernels compute with.
///
/// Implementations exist for `f64` and `f32`; the runtime adds dual numbers and SIMD lanes.
/// Every method is a plain mathematical function: no branch is required of an implementation,
/// and none is taken in generated code.
///
/// ```
/// use geokern_runtime::Scalar;
/// fn hypot<T: Scalar>(a: T, b: T) -> T { (a * a + b * b).sqrt() }
/// assert_eq!(hypot(3.0_f64, 4.0), 5.0);
/// assert_eq!(hypot(3.0_f32, 4.0), 5.0);
/// ```
pub trait Scalar:
    Copy
    + Add<Output = Self>
    + Sub<Output = Self>
    + Mul<Output = Self>
    + Div<Output = Self>
    + Neg<Output = Self>
{
    /// The value nearest to `v` (a constant of a kernel, or a parameter).
    fn from_f64(v: f64) -> Self;
    /// Square root.
    fn sqrt(self) -> Self;
    /// Sine.
    fn sin(self) -> Self;
    /// Cosine.
    fn cos(self) -> Self;
    /// Sine and cosine of the same argument, computed together where the type can.
    fn sin_cos(self) -> (Self, Self) {
        (self.sin(), self.cos())
    }
    /// Tangent.
    fn tan(self) -> Self;
    /// Natural exponential.
    fn exp(self) -> Self;
    /// Natural logarithm.
    fn ln(self) -> Self;
    /// Hyperbolic sine.
    fn sinh(self) -> Self;
    /// Hyperbolic cosine.
    fn cosh(self) -> Self;
    /// Hyperbolic tangent.
    fn tanh(self) -> Self;
    /// Inverse sine.
    fn asin(self) -> Self;
    /// Inverse cosine.
    fn acos(self) -> Self;
    /// Inverse tangent.
    fn atan(self) -> Self;
    /// `self` raised to a real power.
    fn powf(self, e: Self) -> Self;
}

/// Implements [`Scalar`] for a primitive float: the inherent `std` methods where `std` is on,
/// `libm` otherwise, so kernels build for targets without an operating system.
macro_rules! float_scalar {
    ($t:ty; sin_cos => $sincos:path, powf => $pow:path; $($name:ident => $libm:path),* $(,)?) => {
        impl Scalar for $t {
            #[inline(always)]
            fn from_f64(v: f64) -> Self {
                v as $t
            }
            $(
                #[inline(always)]
                fn $name(self) -> Self {
                    #[cfg(feature = "std")]
                    return <$t>::$name(self);
                    #[cfg(not(feature = "std"))]
                    return $libm(self);
                }
            )*
            #[inline(always)]
            fn sin_cos(self) -> (Self, Self) {
                #[cfg(feature = "std")]
                return <$t>::sin_cos(self);
                #[cfg(not(feature = "std"))]
                return $sincos(self);
            }
            #[inline(always)]
            fn powf(self, e: Self) -> Self {
                #[cfg(feature = "std")]
                return <$t>::powf(self, e);
                #[cfg(not(feature = "std"))]
                return $pow(self, e);
            }
        }
    };
}

float_scalar!(f64; sin_cos => libm::sincos, powf => libm::pow;
    sqrt => libm::sqrt, sin => libm::sin, cos => libm::cos, tan => libm::tan,
    exp => libm::exp, ln => libm::log, sinh => libm::sinh, cosh => libm::cosh,
    tanh => libm::tanh, asin => libm::asin, acos => libm::acos, atan => libm::atan);
float_scalar!(f32; sin_cos => libm::sincosf, powf => libm::powf;
    sqrt => libm::sqrtf, sin => libm::sinf, cos => libm::cosf, tan => libm::tanf,
    exp => libm::expf, ln => libm::logf, sinh => libm::sinhf, cosh => libm::coshf,
    tanh => libm::tanhf, asin => libm::asinf, acos => libm::acosf, atan => libm::atanf);
