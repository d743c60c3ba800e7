//! The physical range of each quantity a person can type: a value outside it is a typing
//! slip (a missing decimal point, an exponent, the wrong unit), never a real part, and it is
//! refused with the range before any figure is computed. [`super::parse_with_unit`] checks
//! every quantity it reads against this table; narrower limits of one method (a mirror
//! radius below 10 m, an a/t below 0.8) stay with that method.
//!
//! The limits, and why (each far beyond what glass, ceramics, their service and their
//! laboratory tests reach, yet small enough that nothing downstream overflows):
//!
//! | quantity | magnitude from | to | basis |
//! |---|---|---|---|
//! | length | 0.1 nm | 1 km | an atomic spacing; larger than any span or glazed facade |
//! | stress or pressure | 0 | 100 GPa | about ten times the theoretical strength of silica glass |
//! | fracture toughness | 0 | 1000 MPa·√m | several times the toughest steels |
//! | mass | 0 | 1000 t | more than any vehicle or falling load that strikes glazing |
//! | speed | 0 | 10 km/s | hypervelocity impact; faster than any projectile or debris on earth |
//! | time | 1 ns | 100 years | below the shortest contact time; longer than any service life |
//! | force | 0 | 1 GN | more than any press or structure bears on a part |
//! | temperature difference | 0 | 2000 K | more than the span from liquid nitrogen to molten glass |
//! | energy | 0 | 1 GJ | more than any impact a part can take |
//!
//! Zero stays allowed where the caller allows it (a zero surface compression); the lower
//! limit applies to values other than zero. Signs are the caller's business: the range is on
//! the magnitude.

use super::{format_sig, Dimension, Unit};

/// The range of one dimension: magnitudes other than zero lie in `[min, max]` (SI).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct PhysicalRange {
    pub min: f64,
    pub max: f64,
    /// The units the limits are printed in.
    pub min_unit: Unit,
    pub max_unit: Unit,
}

impl PhysicalRange {
    /// True when `si` is zero or its magnitude lies within the range.
    pub fn contains(&self, si: f64) -> bool {
        si == 0.0 || (si.abs() >= self.min && si.abs() <= self.max)
    }

    /// The range in words: "0.0001 µm to 1000 m", "up to 2000 K".
    pub fn text(&self) -> String {
        if self.min > 0.0 {
            format!(
                "{} to {}",
                format_sig(self.min, self.min_unit, 1),
                format_sig(self.max, self.max_unit, 1)
            )
        } else {
            format!("up to {}", format_sig(self.max, self.max_unit, 1))
        }
    }
}

/// The physical range of a dimension (see the table above).
pub fn physical_range(dim: Dimension) -> PhysicalRange {
    let (min, min_unit, max, max_unit) = match dim {
        Dimension::Length => (1e-10, Unit::Micrometre, 1e3, Unit::Metre),
        Dimension::Stress => (0.0, Unit::Pascal, 100e9, Unit::Gigapascal),
        Dimension::Toughness => (0.0, Unit::PascalRootMetre, 1e9, Unit::MegapascalRootMetre),
        Dimension::Mass => (0.0, Unit::Gram, 1e6, Unit::Kilogram),
        Dimension::Speed => (0.0, Unit::MetrePerSecond, 1e4, Unit::MetrePerSecond),
        Dimension::Time => (
            1e-9,
            Unit::Microsecond,
            100.0 * 365.25 * 86_400.0,
            Unit::Second,
        ),
        Dimension::Force => (0.0, Unit::Newton, 1e9, Unit::Kilonewton),
        Dimension::TemperatureDifference => (0.0, Unit::Kelvin, 2000.0, Unit::Kelvin),
        Dimension::Energy => (0.0, Unit::Joule, 1e9, Unit::Joule),
    };
    PhysicalRange {
        min,
        max,
        min_unit,
        max_unit,
    }
}

#[cfg(test)]
mod tests {
    use super::super::{parse, Dimension, UnitError};
    use super::*;

    #[test]
    fn absurd_values_are_refused_with_the_range() {
        for (text, dim) in [
            ("1e300mm", Dimension::Length),
            ("1e308°C", Dimension::TemperatureDifference),
            ("1e308K", Dimension::TemperatureDifference),
            ("5000K", Dimension::TemperatureDifference),
            ("1e-8um", Dimension::Length),
            ("200GPa", Dimension::Stress),
            ("-200GPa", Dimension::Stress),
            ("1e12kg", Dimension::Mass),
            ("20000m/s", Dimension::Speed),
            ("1e-12s", Dimension::Time),
        ] {
            match parse(text, dim) {
                Err(UnitError::OutOfRange { range, .. }) => {
                    assert_eq!(range, physical_range(dim).text(), "{text}")
                }
                other => panic!("{text}: {other:?}"),
            }
        }
    }

    #[test]
    fn real_values_at_the_edges_are_accepted() {
        for (text, dim) in [
            ("0mm", Dimension::Length),
            ("0.0005um", Dimension::Length),
            ("900m", Dimension::Length),
            ("0MPa", Dimension::Stress),
            ("-95MPa", Dimension::Stress),
            ("20GPa", Dimension::Stress),
            ("1999K", Dimension::TemperatureDifference),
            ("40000kg", Dimension::Mass),
            ("1.5km/h", Dimension::Speed),
            ("0.2ms", Dimension::Time),
        ] {
            assert!(parse(text, dim).is_ok(), "{text}: {:?}", parse(text, dim));
        }
        let r = physical_range(Dimension::TemperatureDifference);
        assert_eq!(r.text(), "up to 2000 K");
        assert!(r.contains(-2000.0) && !r.contains(2000.1));
    }
}
