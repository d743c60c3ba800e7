//! Blunt impact by impulse and momentum.
//!
//! Method: impulse–momentum theorem (Newton's second law integrated over the contact). A body of
//! mass m arriving at speed v and leaving at e·v (e the coefficient of restitution) changes its
//! momentum by m(1 + e)v; spread over a contact time Δt the mean force is
//! F = m(1 + e)v / Δt. The peak of a real pulse is higher than the mean (for a half-sine pulse
//! by π/2); this returns the mean, as the trade usually quotes it (common practice).

use super::{positive, within, LoadError, Warning};

/// Inputs of the impulse model, SI.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Impulse {
    /// kg
    pub mass: f64,
    /// m/s, the speed on arrival
    pub speed: f64,
    /// s
    pub contact_time: f64,
    /// 0 (the body stops dead) to 1 (perfectly elastic rebound)
    pub restitution: f64,
}

/// What the impulse model gives.
#[derive(Debug, Clone, PartialEq)]
pub struct ImpulseResult {
    /// Mean contact force, N.
    pub force: f64,
    /// Peak force of a half-sine pulse with the same impulse, N (π/2 × mean).
    pub peak_force_half_sine: f64,
    /// Momentum change, N·s.
    pub impulse: f64,
    /// Kinetic energy on arrival, J.
    pub energy: f64,
    pub warnings: Vec<Warning>,
}

pub const IMPULSE_METHOD: &str =
    "impulse-momentum: mean force F = m(1+e)v/dt over the contact time (Newton's second law)";

/// Contact times shorter than this are unusual for a blunt body on glass; longer ones are
/// typical of soft bodies (a person, a bag). Thresholds are for the warning only.
const SHORT_CONTACT_S: f64 = 0.2e-3;
const LONG_CONTACT_S: f64 = 0.5;

pub fn impulse(input: &Impulse) -> Result<ImpulseResult, LoadError> {
    let m = positive("mass", input.mass)?;
    let v = positive("speed", input.speed)?;
    let dt = positive("contact-time", input.contact_time)?;
    let e = within(
        "restitution",
        input.restitution,
        0.0,
        1.0,
        "a coefficient of restitution from 0 to 1",
    )?;
    let impulse = m * (1.0 + e) * v;
    let force = impulse / dt;
    super::fits("speed", v, &[impulse, force, force * 2.0, 0.5 * m * v * v])?;
    let mut warnings = Vec::new();
    if dt < SHORT_CONTACT_S {
        warnings.push(Warning::new(
            "short-contact",
            "contact time under 0.2 ms: the impact is local (contact damage, Hertz), not plate \
             bending; try the sphere model",
        ));
    }
    if dt > LONG_CONTACT_S {
        warnings.push(Warning::new(
            "long-contact",
            "contact time over 0.5 s: this is a push rather than an impact; the mean force is small",
        ));
    }
    Ok(ImpulseResult {
        force,
        peak_force_half_sine: force * std::f64::consts::FRAC_PI_2,
        impulse,
        energy: 0.5 * m * v * v,
        warnings,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn elastic_rebound_doubles_the_momentum_change() {
        let a = impulse(&Impulse {
            mass: 2.0,
            speed: 10.0,
            contact_time: 0.01,
            restitution: 0.0,
        })
        .unwrap();
        let b = impulse(&Impulse {
            restitution: 1.0,
            ..Impulse {
                mass: 2.0,
                speed: 10.0,
                contact_time: 0.01,
                restitution: 0.0,
            }
        })
        .unwrap();
        assert!((a.force - 2000.0).abs() < 1e-9);
        assert!((b.force - 4000.0).abs() < 1e-9);
    }
}
