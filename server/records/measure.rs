//! Typed quantities of the records and the model: a length is a [`Length`], never an `f64`
//! that a name says is in millimetres. Each type holds its value in the one internal unit of its
//! kind (`clutch::quantity::Kind`: mm, N, N/mm, N·m, kg, g, rpm, °C, s), which is also how it is stored and how the
//! record API writes it (`facing_od_mm` stays a number of millimetres in JSON and in its
//! column: serde and sqlx see the plain number). The shop's display units exist only at the
//! edges: a form reads them through the field's `Kind`, a page shows them through `Show`.
//!
//! Own newtypes rather than a units crate: the program needs nine kinds, each with one internal
//! unit already fixed by `clutch::quantity::Kind` (which also writes every unit system's
//! symbols and roundings), and a general dimensional-analysis crate would add generic types to
//! every signature and its own conversions beside the ones the shop's display needs. The
//! engineering crate keeps plain numbers in its calculation requests: those are its JSON API,
//! in whichever units the request names. No IO here.

use serde::{Deserialize, Serialize};

/// A value of kind `Q` as a caller hands it over: the typed quantity itself, or a plain number
/// already in `Q`'s internal unit (what the engineering crate answers), by value or by
/// reference. A page asking for a length accepts a [`Length`] or a number, never a [`Force`]:
///
/// ```
/// use lockpoint::records::measure::{Amount, Length};
/// // How `Show::len` takes its argument.
/// fn length_mm(l: impl Amount<Length>) -> f64 {
///     l.internal()
/// }
/// assert_eq!(length_mm(Length::from_mm(48.387)), 48.387);
/// assert_eq!(length_mm(48.387), 48.387);
/// ```
///
/// ```compile_fail
/// use lockpoint::records::measure::{Amount, Force, Length};
/// fn length_mm(l: impl Amount<Length>) -> f64 {
///     l.internal()
/// }
/// // A force handed over as a length: refused by the compiler.
/// length_mm(Force::from_n(4448.2));
/// ```
pub trait Amount<Q>: Copy {
    /// The value in `Q`'s internal unit.
    fn internal(self) -> f64;
}

impl<Q> Amount<Q> for f64 {
    fn internal(self) -> f64 {
        self
    }
}

impl<Q, T: Amount<Q>> Amount<Q> for &T {
    fn internal(self) -> f64 {
        (*self).internal()
    }
}

macro_rules! quantity {
    ($(#[$doc:meta])* $name:ident, $unit:ident, $from:ident) => {
        $(#[$doc])*
        #[derive(
            Debug, Clone, Copy, Default, PartialEq, PartialOrd, Serialize, Deserialize,
            sqlx::Type, utoipa::ToSchema,
        )]
        #[serde(transparent)]
        #[sqlx(transparent)]
        pub struct $name(f64);

        impl $name {
            /// From a value in the internal unit.
            pub const fn $from(v: f64) -> Self {
                Self(v)
            }

            /// The value in the internal unit.
            pub const fn $unit(self) -> f64 {
                self.0
            }

            pub fn is_finite(self) -> bool {
                self.0.is_finite()
            }

            pub fn abs(self) -> Self {
                Self(self.0.abs())
            }

            pub fn max(self, other: Self) -> Self {
                Self(self.0.max(other.0))
            }

            pub fn min(self, other: Self) -> Self {
                Self(self.0.min(other.0))
            }
        }

        impl std::ops::Add for $name {
            type Output = Self;
            fn add(self, other: Self) -> Self {
                Self(self.0 + other.0)
            }
        }

        impl std::ops::Sub for $name {
            type Output = Self;
            fn sub(self, other: Self) -> Self {
                Self(self.0 - other.0)
            }
        }

        impl std::ops::Neg for $name {
            type Output = Self;
            fn neg(self) -> Self {
                Self(-self.0)
            }
        }

        /// Scaled by a plain number.
        impl std::ops::Mul<f64> for $name {
            type Output = Self;
            fn mul(self, k: f64) -> Self {
                Self(self.0 * k)
            }
        }

        impl std::ops::Div<f64> for $name {
            type Output = Self;
            fn div(self, k: f64) -> Self {
                Self(self.0 / k)
            }
        }

        /// The ratio of two quantities of one kind, a plain number.
        impl std::ops::Div for $name {
            type Output = f64;
            fn div(self, other: Self) -> f64 {
                self.0 / other.0
            }
        }

        impl std::iter::Sum for $name {
            fn sum<I: Iterator<Item = Self>>(iter: I) -> Self {
                Self(iter.map(|q| q.0).sum())
            }
        }

        impl<'a> std::iter::Sum<&'a $name> for $name {
            fn sum<I: Iterator<Item = &'a Self>>(iter: I) -> Self {
                Self(iter.map(|q| q.0).sum())
            }
        }

        impl Amount<$name> for $name {
            fn internal(self) -> f64 {
                self.0
            }
        }
    };
}

quantity!(
    /// A length, mm.
    Length, mm, from_mm
);
quantity!(
    /// A force, N.
    Force, n, from_n
);
quantity!(
    /// A spring rate, N/mm.
    SpringRate, n_per_mm, from_n_per_mm
);
quantity!(
    /// A torque, N·m.
    Torque, nm, from_nm
);
quantity!(
    /// A vehicle's or a part's mass, kg.
    Mass, kg, from_kg
);
quantity!(
    /// A small mass (counterweights, levers), g: grams in both unit systems.
    Grams, g, from_g
);
quantity!(
    /// A lever's measured gain: clamp force per gram of counterweight at 1000 rpm, N/g.
    LeverGain, n_per_g, from_n_per_g
);
quantity!(
    /// An engine speed, rev/min.
    EngineSpeed, rpm, from_rpm
);
quantity!(
    /// A temperature, °C.
    Temperature, c, from_c
);
quantity!(
    /// A time, s.
    Seconds, s, from_s
);

#[cfg(test)]
mod tests {
    use super::*;

    /// The record API and the columns keep the plain number in the internal unit.
    #[test]
    fn a_quantity_is_its_plain_number_in_json() {
        let v = serde_json::to_value(Length::from_mm(184.15)).unwrap();
        assert_eq!(v, serde_json::json!(184.15));
        let back: Option<Force> = serde_json::from_value(serde_json::json!(4448.2)).unwrap();
        assert_eq!(back.map(Force::n), Some(4448.2));
    }
}
