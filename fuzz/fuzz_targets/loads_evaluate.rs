//! Arbitrary hypotheses into `loads::evaluate` (and the critical-flaw helpers).
//! Properties: never panics; either a typed error naming a field, or finite figures.
#![no_main]

use arbitrary::{Arbitrary, Result, Unstructured};
use libfuzzer_sys::fuzz_target;
use shardlog_core::loads::{self, contact, impact, plates, thermal, Elastic, Hypothesis};

fn number(u: &mut Unstructured, scale: f64) -> Result<f64> {
    Ok(match u.int_in_range(0u8..=9)? {
        0 => f64::arbitrary(u)?,
        1 => [0.0, -0.0, f64::NAN, f64::INFINITY, f64::NEG_INFINITY, f64::MIN_POSITIVE, 5e-324, f64::MAX, -1.0][u.choose_index(9)?],
        2 => scale * 10f64.powi(u.int_in_range(-30..=30)?),
        _ => scale * (u.int_in_range(1u32..=1_000_000)? as f64) / 1000.0,
    })
}

fn elastic(u: &mut Unstructured) -> Result<Elastic> {
    Ok(Elastic { youngs_modulus: number(u, 70e9)?, poisson: number(u, 0.2)? })
}

fn hypothesis(u: &mut Unstructured) -> Result<Hypothesis> {
    Ok(match u.int_in_range(0u8..=3)? {
        0 => Hypothesis::Impulse(impact::Impulse {
            mass: number(u, 1.0)?,
            speed: number(u, 10.0)?,
            contact_time: number(u, 1e-3)?,
            restitution: number(u, 0.5)?,
        }),
        1 => Hypothesis::Sphere(contact::SphereImpact {
            sphere_diameter: number(u, 0.02)?,
            sphere: elastic(u)?,
            sphere_density: number(u, 7850.0)?,
            mass: if bool::arbitrary(u)? { Some(number(u, 0.1)?) } else { None },
            speed: number(u, 10.0)?,
            target: elastic(u)?,
            thickness: number(u, 6e-3)?,
        }),
        2 => Hypothesis::Plate(plates::Plate {
            shape: if bool::arbitrary(u)? { plates::Shape::Circular } else { plates::Shape::Rectangular },
            edges: if bool::arbitrary(u)? { plates::Edges::SimplySupported } else { plates::Edges::Clamped },
            span: number(u, 1.0)?,
            span_b: if bool::arbitrary(u)? { Some(number(u, 1.0)?) } else { None },
            thickness: number(u, 6e-3)?,
            material: elastic(u)?,
            load: if bool::arbitrary(u)? {
                plates::PlateLoad::Pressure(number(u, 1e3)?)
            } else {
                plates::PlateLoad::Patch { force: number(u, 1e3)?, diameter: number(u, 0.05)? }
            },
        }),
        _ => Hypothesis::Thermal(thermal::Thermal {
            youngs_modulus: number(u, 70e9)?,
            expansion: number(u, 9e-6)?,
            delta_t: number(u, 30.0)?,
            restraint: number(u, 1.0)?,
        }),
    })
}

fuzz_target!(|data: &[u8]| {
    let mut u = Unstructured::new(data);
    let Ok(h) = hypothesis(&mut u) else { return };
    match loads::evaluate(&h) {
        Err(e) => assert!(!e.field().is_empty() && !e.to_string().is_empty()),
        Ok(o) => {
            for (what, v) in [("force", o.force), ("stress", o.stress), ("deflection", o.deflection)] {
                if let Some(v) = v {
                    assert!(v.is_finite(), "{what} = {v} for {h:?}");
                }
            }
            for w in &o.warnings {
                assert!(!w.code.is_empty() && !w.message.is_empty());
            }
        }
    }
});
