//! The design calculator: what a torsion spring's drawing geometry says its rate, torque,
//! stress and wound-down size should be.
//!
//! The forms are EN 13906-3's (the spring makers' handbooks use the same ones):
//!
//! - active coils n = n_body + (l1 + l2)/(3π·D): each straight leg, bent as a cantilever by
//!   the force that loads it, turns through as much as a length l/3 of coiled wire would;
//! - rate R = E·d⁴/(K·D·n) per degree with K = 64·180/π ≈ 3667 ([`RATE_CONSTANT_PER_DEG`]);
//!   per turn with 64/(2π) ≈ 10.19 ([`RATE_CONSTANT_PER_TURN`]) and, labelled empirical, the
//!   handbooks' 10.8 ([`EMPIRICAL_CONSTANT_PER_TURN`]) that allows for coil friction;
//! - bending stress σ = q·32·M/(π·d³) with EN 13906-3's curvature factor
//!   q = (w + 0.07)/(w − 0.75), w = D/d, and the handbooks' Wahl-type inner-fibre factor
//!   (4C² − C − 1)/(4C(C − 1)) alongside;
//! - the coil winds down under load: D' = D·n/(n + α/360); an arbor should stay at or below
//!   about 90 % of the wound-down inside diameter D' − d (common practice);
//! - a close-wound body of n coils is (n + 1)·d long and gains α/360 turns under load.
//!
//! These are the drawing's *theoretical* values. They tell whether a measured rate is
//! plausible; they do not replace the customer's drawing and specification, the rig's
//! measurement, or a licensed engineer's judgement of stresses and safety.

use std::f64::consts::PI;

use serde::{Deserialize, Serialize};
use thiserror::Error;
use twistlot_model::spec::{Geometry, Material};

/// 64·180/π ≈ 3666.9: the rate-per-degree constant of EN 13906-3 (printed there rounded to 3667).
///
/// Why this number: the coils of a torsion spring are a curved beam in pure bending, so
/// the angle they turn through is φ = M·L/(E·I) with L = π·D·n the active wire length and
/// I = π·d⁴/64 the wire's second moment of area. Then M/φ = E·d⁴/(64·D·n) per radian, and
/// per degree (φ = α·π/180) M/α = E·d⁴/((64·180/π)·D·n).
pub const RATE_CONSTANT_PER_DEG: f64 = 64.0 * 180.0 / PI;

/// 64/(2π) ≈ 10.19: the theoretical rate-per-turn constant (one turn is 360°, so 3667/360).
pub const RATE_CONSTANT_PER_TURN: f64 = 64.0 / (2.0 * PI);

/// 10.8: the spring makers' handbooks' empirical per-turn constant, which allows for the
/// friction between coils and on the arbor and so gives a rate about 6 % below theory.
pub const EMPIRICAL_CONSTANT_PER_TURN: f64 = 10.8;

/// Share of the wound-down inside diameter an arbor may fill (common practice).
pub const ARBOR_SHARE: f64 = 0.9;

/// A spring as its drawing describes it; all lengths in mm, the modulus in N/mm².
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct SpringDesign {
    /// Wire diameter d, mm.
    pub wire_diameter_mm: f64,
    /// Mean coil diameter D, mm.
    pub mean_diameter_mm: f64,
    /// Body coils n_body (the coiled part only).
    pub body_coils: f64,
    /// Straight leg lengths l1 and l2, mm, measured from the coil's axis (0 for none).
    pub leg_lengths_mm: [f64; 2],
    /// Young's modulus E, N/mm².
    pub modulus_n_per_mm2: f64,
}

/// An input the calculator cannot use, naming the field and what to give instead.
#[derive(Debug, Clone, PartialEq, Error)]
pub enum DesignError {
    /// A quantity that must be a positive number is zero, negative or not a number.
    #[error("`{field}` must be a finite number above zero; found {value}")]
    NotPositive {
        /// The input's name.
        field: &'static str,
        /// The value given.
        value: f64,
    },
    /// A leg length is negative or not a number.
    #[error("`{field}` must be a finite length of zero or more (0 for no leg); found {value}")]
    BadLegLength {
        /// The input's name.
        field: &'static str,
        /// The value given.
        value: f64,
    },
    /// The mean coil diameter is not larger than the wire.
    #[error(
        "`mean_diameter_mm` ({mean_diameter_mm}) must be larger than `wire_diameter_mm` \
         ({wire_diameter_mm}): a coil's mean diameter exceeds its wire; check that the outside \
         or inside diameter was not given by mistake"
    )]
    CoilNotWiderThanWire {
        /// Mean coil diameter D, mm.
        mean_diameter_mm: f64,
        /// Wire diameter d, mm.
        wire_diameter_mm: f64,
    },
    /// The spec gives neither a mean nor an outside diameter.
    #[error("the spec's geometry gives neither `mean_diameter_mm` nor `outside_diameter_mm`")]
    MissingMeanDiameter,
    /// The deflection angle is negative or not a number.
    #[error(
        "`deflection_deg` must be a finite angle of zero or more, turned in the winding \
         direction; found {value} (loads that unwind the coil are not covered)"
    )]
    BadDeflection {
        /// The value given.
        value: f64,
    },
    /// The deflection would wind the coil down until its inside diameter closes.
    #[error(
        "a deflection of {deflection_deg}° winds the coil down until nothing fits inside it \
         (the inside diameter closes at about {closing_deg:.1}°); the spring cannot reach this angle"
    )]
    WindsShut {
        /// The deflection asked for, degrees.
        deflection_deg: f64,
        /// The deflection at which the wound-down inside diameter reaches zero, degrees.
        closing_deg: f64,
    },
}

/// The rate the geometry predicts (serialised with these field names for `theory --format json`).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct DesignRate {
    /// Active coils n = n_body + n_legs.
    pub active_coils: f64,
    /// The legs' contribution n_legs = (l1 + l2)/(3π·D).
    pub leg_coils: f64,
    /// Spring index w = D/d.
    pub spring_index: f64,
    /// Theoretical rate per degree E·d⁴/(3667·D·n), N·mm/°.
    pub rate_nmm_per_deg: f64,
    /// Theoretical rate per turn E·d⁴/(10.19·D·n), N·mm per 360°.
    pub rate_nmm_per_turn: f64,
    /// The handbooks' empirical rate per turn E·d⁴/(10.8·D·n), N·mm per 360° (allows for friction).
    pub rate_nmm_per_turn_empirical: f64,
    /// Where the geometry lies outside EN 13906-3's scope; the numbers are then less certain.
    pub scope_notes: Vec<String>,
}

/// Torque, stress and size at one deflection (serialised with these field names).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct AtAngle {
    /// Deflection from the free position, degrees, in the winding direction.
    pub deflection_deg: f64,
    /// Torque at the deflection from the theoretical rate, N·mm.
    pub torque_nmm: f64,
    /// Nominal bending stress with EN 13906-3's factor q, N/mm² (MPa).
    pub stress_mpa: f64,
    /// EN 13906-3's curvature factor q = (w + 0.07)/(w − 0.75).
    pub stress_factor_q: f64,
    /// The Wahl-type inner-fibre factor (4C² − C − 1)/(4C(C − 1)), C = w.
    pub stress_factor_wahl: f64,
    /// Nominal bending stress with the Wahl-type factor, N/mm² (MPa).
    pub stress_wahl_mpa: f64,
    /// Wound-down mean diameter D' = D·n/(n + α/360), mm.
    pub mean_diameter_mm: f64,
    /// Wound-down inside diameter D' − d, mm.
    pub inside_diameter_mm: f64,
    /// Largest arbor that keeps to 90 % of the wound-down inside diameter, mm (common practice).
    pub max_arbor_mm: f64,
    /// Body length of a close-wound spring at the deflection, d·(n + 1 + α/360), mm.
    pub body_length_mm: f64,
}

/// The whole calculation: the rate and, when an angle is given, the values there.
///
/// Serialises flat: the rate's fields, then the angle's when there is one.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Theory {
    /// The geometry the values come from.
    pub design: SpringDesign,
    /// The rate.
    #[serde(flatten)]
    pub rate: DesignRate,
    /// Values at the deflection asked for.
    #[serde(flatten)]
    pub at_angle: Option<AtAngle>,
}

impl SpringDesign {
    /// Takes the geometry and modulus from a part spec (mean diameter from the outside one when
    /// only that is given) and checks them.
    pub fn from_spec(geometry: &Geometry, material: &Material) -> Result<SpringDesign, DesignError> {
        let design = SpringDesign {
            wire_diameter_mm: geometry.wire_diameter_mm,
            mean_diameter_mm: geometry.mean_diameter().ok_or(DesignError::MissingMeanDiameter)?,
            body_coils: geometry.body_coils,
            leg_lengths_mm: geometry.leg_lengths_mm,
            modulus_n_per_mm2: material.modulus_n_per_mm2,
        };
        design.validate()?;
        Ok(design)
    }

    /// Checks every input; the first one that cannot be used is named.
    pub fn validate(&self) -> Result<(), DesignError> {
        for (field, value) in [
            ("wire_diameter_mm", self.wire_diameter_mm),
            ("mean_diameter_mm", self.mean_diameter_mm),
            ("body_coils", self.body_coils),
            ("modulus_n_per_mm2", self.modulus_n_per_mm2),
        ] {
            if !(value.is_finite() && value > 0.0) {
                return Err(DesignError::NotPositive { field, value });
            }
        }
        for (field, value) in
            [("leg_lengths_mm[0]", self.leg_lengths_mm[0]), ("leg_lengths_mm[1]", self.leg_lengths_mm[1])]
        {
            if !(value.is_finite() && value >= 0.0) {
                return Err(DesignError::BadLegLength { field, value });
            }
        }
        // D > d keeps w above 1, clear of q's pole at w = 0.75 and the Wahl factor's at C = 1.
        if self.mean_diameter_mm <= self.wire_diameter_mm {
            return Err(DesignError::CoilNotWiderThanWire {
                mean_diameter_mm: self.mean_diameter_mm,
                wire_diameter_mm: self.wire_diameter_mm,
            });
        }
        Ok(())
    }

    /// Spring index w = D/d.
    pub fn spring_index(&self) -> f64 {
        self.mean_diameter_mm / self.wire_diameter_mm
    }

    /// Active coils: body coils plus the legs' contribution.
    pub fn active_coils(&self) -> f64 {
        self.body_coils + leg_coils(self.leg_lengths_mm, self.mean_diameter_mm)
    }
}

/// The coils a pair of straight legs adds: (l1 + l2)/(3π·D).
pub fn leg_coils(leg_lengths_mm: [f64; 2], mean_diameter_mm: f64) -> f64 {
    (leg_lengths_mm[0] + leg_lengths_mm[1]) / (3.0 * PI * mean_diameter_mm)
}

/// EN 13906-3's curvature (stress correction) factor q = (w + 0.07)/(w − 0.75).
pub fn curvature_factor_q(spring_index: f64) -> f64 {
    (spring_index + 0.07) / (spring_index - 0.75)
}

/// The Wahl-type inner-fibre factor for bending, (4C² − C − 1)/(4C(C − 1)).
pub fn wahl_bending_factor(spring_index: f64) -> f64 {
    let c = spring_index;
    (4.0 * c * c - c - 1.0) / (4.0 * c * (c - 1.0))
}

/// Nominal bending stress 32·M/(π·d³) times a curvature factor, N/mm².
pub fn bending_stress_mpa(torque_nmm: f64, wire_diameter_mm: f64, factor: f64) -> f64 {
    factor * 32.0 * torque_nmm / (PI * wire_diameter_mm.powi(3))
}

/// Mean diameter wound down by a deflection: D' = D·n/(n + α/360).
pub fn wound_down_mean_diameter_mm(mean_diameter_mm: f64, coils: f64, deflection_deg: f64) -> f64 {
    mean_diameter_mm * coils / (coils + deflection_deg / 360.0)
}

/// Rate, per degree, per turn and the empirical per-turn value, for a valid design.
pub fn design_rate(design: &SpringDesign) -> Result<DesignRate, DesignError> {
    design.validate()?;
    let n = design.active_coils();
    let stiffness =
        design.modulus_n_per_mm2 * design.wire_diameter_mm.powi(4) / (design.mean_diameter_mm * n);
    Ok(DesignRate {
        active_coils: n,
        leg_coils: leg_coils(design.leg_lengths_mm, design.mean_diameter_mm),
        spring_index: design.spring_index(),
        rate_nmm_per_deg: stiffness / RATE_CONSTANT_PER_DEG,
        rate_nmm_per_turn: stiffness / RATE_CONSTANT_PER_TURN,
        rate_nmm_per_turn_empirical: stiffness / EMPIRICAL_CONSTANT_PER_TURN,
        scope_notes: scope_notes(design, n),
    })
}

/// Torque, stresses, wound-down diameters, largest arbor and body length at a deflection.
///
/// The wound-down diameter and the body length use the *body* coils and the whole
/// deflection, as the handbooks write them. The legs in fact take part of the deflection,
/// so this errs towards a smaller inside diameter and a longer body: the safe side for an
/// arbor and a housing.
pub fn at_angle(design: &SpringDesign, deflection_deg: f64) -> Result<AtAngle, DesignError> {
    let rate = design_rate(design)?;
    if !(deflection_deg.is_finite() && deflection_deg >= 0.0) {
        return Err(DesignError::BadDeflection { value: deflection_deg });
    }
    let d = design.wire_diameter_mm;
    let n_body = design.body_coils;
    // D·n/(n + α/360) = d where the inside diameter closes: α = 360·n·(w − 1).
    let closing_deg = 360.0 * n_body * (design.spring_index() - 1.0);
    if deflection_deg >= closing_deg {
        return Err(DesignError::WindsShut { deflection_deg, closing_deg });
    }
    let torque_nmm = rate.rate_nmm_per_deg * deflection_deg;
    let q = curvature_factor_q(rate.spring_index);
    let wahl = wahl_bending_factor(rate.spring_index);
    let mean = wound_down_mean_diameter_mm(design.mean_diameter_mm, n_body, deflection_deg);
    let inside = mean - d;
    Ok(AtAngle {
        deflection_deg,
        torque_nmm,
        stress_mpa: bending_stress_mpa(torque_nmm, d, q),
        stress_factor_q: q,
        stress_factor_wahl: wahl,
        stress_wahl_mpa: bending_stress_mpa(torque_nmm, d, wahl),
        mean_diameter_mm: mean,
        inside_diameter_mm: inside,
        max_arbor_mm: ARBOR_SHARE * inside,
        body_length_mm: d * (n_body + 1.0 + deflection_deg / 360.0),
    })
}

/// The rate, and the values at a deflection when one is given.
pub fn theory(design: &SpringDesign, deflection_deg: Option<f64>) -> Result<Theory, DesignError> {
    let rate = design_rate(design)?;
    let at_angle = deflection_deg.map(|angle| at_angle(design, angle)).transpose()?;
    Ok(Theory { design: *design, rate, at_angle })
}

/// EN 13906-3 covers cold-coiled springs with d ≤ 20 mm, n ≥ 2 and 4 ≤ w ≤ 20 (its Table 1).
fn scope_notes(design: &SpringDesign, active_coils: f64) -> Vec<String> {
    let mut notes = Vec::new();
    let w = design.spring_index();
    if !(4.0..=20.0).contains(&w) {
        notes.push(format!(
            "spring index w = D/d = {w:.2} lies outside 4 ≤ w ≤ 20, the range EN 13906-3 covers; \
             rate and stress factors are less certain"
        ));
    }
    if active_coils < 2.0 {
        notes.push(format!(
            "{active_coils:.2} active coils is below the 2 EN 13906-3 covers; the coil formulas are less certain"
        ));
    }
    if design.wire_diameter_mm > 20.0 {
        notes.push(format!(
            "wire of {} mm is above the 20 mm EN 13906-3 covers for cold-coiled springs",
            design.wire_diameter_mm
        ));
    }
    notes
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;
    use twistlot_model::spec::WindDirection;

    fn spring(d: f64, dm: f64, n: f64, legs: [f64; 2]) -> SpringDesign {
        SpringDesign {
            wire_diameter_mm: d,
            mean_diameter_mm: dm,
            body_coils: n,
            leg_lengths_mm: legs,
            modulus_n_per_mm2: 206_000.0,
        }
    }

    fn close(a: f64, b: f64, rel: f64) -> bool {
        (a / b - 1.0).abs() <= rel
    }

    /// Inner-fibre stress factor of a curved bar of round section by the Winkler–Bach
    /// curved-beam theory, relative to the straight-beam 32·M/(π·d³).
    fn winkler_bach_factor(w: f64) -> f64 {
        // Lengths in wire diameters (d = 1): centroid radius R = D/2 = w/2, section radius 1/2.
        let (r, c) = (0.5 * w, 0.5);
        let r_n = 0.5 * (r + (r * r - c * c).sqrt()); // neutral-axis radius of a round section
        let (e, r_inner, area) = (r - r_n, r - c, PI * c * c);
        let stress_per_moment = (r_n - r_inner) / (area * e * r_inner);
        stress_per_moment / (32.0 / PI)
    }

    #[test]
    fn rate_per_degree_is_the_bent_wires_and_en_13906_3s_constant_rounds_it() {
        let s = spring(2.0, 16.0, 6.0, [0.0, 0.0]);
        let got = design_rate(&s).unwrap();
        // Source: first principles — Euler–Bernoulli bending of the coiled wire, φ = M·L/(E·I)
        // with L = π·D·n and I = π·d⁴/64, computed here without the code's constant.
        let second_moment = PI * s.wire_diameter_mm.powi(4) / 64.0;
        let wire_length = PI * s.mean_diameter_mm * s.body_coils;
        let beam_rate = s.modulus_n_per_mm2 * second_moment / wire_length * (PI / 180.0);
        assert!(close(got.rate_nmm_per_deg, beam_rate, 1e-12));
        // From memory: EN 13906-3, rate R = E·d⁴/(3667·D·n); its 3667 is 64·180/π rounded.
        assert_eq!(RATE_CONSTANT_PER_DEG.round(), 3667.0);
        let en = 206_000.0 * 2.0_f64.powi(4) / (3667.0 * 16.0 * 6.0);
        assert!(close(got.rate_nmm_per_deg, en, 2e-5));
        // Common practice, no published source: a turn is 360°, so the per-turn constant is
        // 64/(2π) ≈ 10.19.
        assert!(close(got.rate_nmm_per_turn, 360.0 * beam_rate, 1e-12));
        assert_eq!((RATE_CONSTANT_PER_TURN * 100.0).round(), 1019.0);
    }

    #[test]
    fn empirical_per_turn_rate_uses_the_handbooks_10_8() {
        let s = spring(1.5, 12.0, 8.0, [20.0, 25.0]);
        let got = design_rate(&s).unwrap();
        // From memory: Associated Spring, Handbook of Spring Design — torsion spring rate per
        // turn E·d⁴/(10.8·D·N), the 10.8 allowing for friction (theory gives 10.19).
        let n = got.active_coils;
        let handbook = 206_000.0 * 1.5_f64.powi(4) / (10.8 * 12.0 * n);
        assert!(close(got.rate_nmm_per_turn_empirical, handbook, 1e-12));
        assert!(close(
            got.rate_nmm_per_turn / got.rate_nmm_per_turn_empirical,
            10.8 / (64.0 / (2.0 * PI)),
            1e-12
        ));
        assert!(got.rate_nmm_per_turn_empirical < got.rate_nmm_per_turn);
    }

    #[test]
    fn leg_coils_are_a_cantilevers_equivalent_wire_length() {
        // Source: first principles — a straight leg of length l loaded at its end by F (moment
        // M = F·l at the coil) deflects F·l³/(3·E·I), an angle of M·l/(3·E·I) seen from the
        // coil's axis: the same as l/3 of wire in bending, i.e. l/(3π·D) coils.
        let s = spring(1.8, 14.0, 5.5, [30.0, 42.0]);
        let second_moment = PI * 1.8_f64.powi(4) / 64.0;
        let moment = 100.0; // N·mm
        let e = s.modulus_n_per_mm2;
        let coil_angle = moment * PI * 14.0 * 5.5 / (e * second_moment);
        let leg_angle = |l: f64| moment * l / (3.0 * e * second_moment);
        let total_deg = (coil_angle + leg_angle(30.0) + leg_angle(42.0)).to_degrees();
        let got = design_rate(&s).unwrap();
        assert!(close(got.rate_nmm_per_deg, moment / total_deg, 1e-12));
        assert!(close(got.leg_coils, 72.0 / (3.0 * PI * 14.0), 1e-12));
        assert!(close(got.active_coils, 5.5 + got.leg_coils, 1e-15));
    }

    #[test]
    fn curvature_factors_follow_curved_beam_theory() {
        for w in [4.0, 5.0, 6.0, 8.0, 10.0, 14.0, 20.0] {
            // From memory: Winkler–Bach curved-beam theory (e.g. Shigley, Mechanical Engineering
            // Design, curved beams in bending; neutral-axis radius of a round section
            // r_n = (R + √(R² − c²))/2). The Wahl-type factor is its close fit; EN 13906-3's q
            // lies a little above it (a conservative 0.3–2 % over EN's range 4 ≤ w ≤ 20).
            let exact = winkler_bach_factor(w);
            assert!(
                close(wahl_bending_factor(w), exact, 2e-3),
                "w = {w}: Wahl {} vs {exact}",
                wahl_bending_factor(w)
            );
            let q = curvature_factor_q(w);
            assert!(q >= exact && q <= 1.025 * exact, "w = {w}: q {q} vs {exact}");
        }
    }

    #[test]
    fn stress_is_the_straight_beams_times_the_factor() {
        let s = spring(2.0, 20.0, 6.0, [25.0, 25.0]);
        let at = at_angle(&s, 90.0).unwrap();
        // Source: first principles — straight-beam bending σ = M·c/I with c = d/2, I = π·d⁴/64.
        let (fibre, second_moment) = (2.0 / 2.0, PI * 2.0_f64.powi(4) / 64.0);
        let nominal = at.torque_nmm * fibre / second_moment;
        assert!(close(at.stress_mpa, at.stress_factor_q * nominal, 1e-12));
        assert!(close(at.stress_wahl_mpa, at.stress_factor_wahl * nominal, 1e-12));
        // From memory: EN 13906-3, q = (w + 0.07)/(w − 0.75); w = 10 here.
        assert!(close(at.stress_factor_q, 10.07 / 9.25, 1e-12));
        // Common practice, no published source: torque is rate times deflection.
        assert!(close(at.torque_nmm, design_rate(&s).unwrap().rate_nmm_per_deg * 90.0, 1e-12));
    }

    #[test]
    fn wound_down_diameter_keeps_the_wire_length() {
        // Source: first principles — the body's wire length π·D·n is unchanged when the coil winds
        // down by α/360 turns, so D' = π·D·n / (π·(n + α/360)).
        let s = spring(1.2, 10.8, 7.0, [15.0, 15.0]);
        let at = at_angle(&s, 180.0).unwrap();
        let wire = PI * 10.8 * 7.0;
        assert!(close(at.mean_diameter_mm * PI * (7.0 + 0.5), wire, 1e-12));
        assert!(close(at.inside_diameter_mm, at.mean_diameter_mm - 1.2, 1e-12));
        // Common practice, no published source: an arbor at most about 90 % of the wound-down
        // inside diameter.
        assert!(close(at.max_arbor_mm, 0.9 * at.inside_diameter_mm, 1e-12));
        // Common practice, no published source: n close-wound turns of pitch d with the wire's
        // own thickness span (n + 1)·d, and the load adds α/360 turns.
        assert!(close(at.body_length_mm, 1.2 * (7.0 + 1.0 + 0.5), 1e-12));
        let free = at_angle(&s, 0.0).unwrap();
        assert!(close(free.mean_diameter_mm, 10.8, 1e-15) && free.torque_nmm == 0.0);
        assert!(close(free.body_length_mm, 1.2 * 8.0, 1e-12));
    }

    #[test]
    fn from_spec_takes_the_mean_diameter_or_derives_it() {
        let material = Material { name: "spring steel".into(), modulus_n_per_mm2: 206_000.0 };
        let mut geometry = Geometry {
            wire_diameter_mm: 1.6,
            mean_diameter_mm: None,
            outside_diameter_mm: Some(14.0),
            body_coils: 6.25,
            leg_lengths_mm: [25.0, 30.0],
            wind: WindDirection::Right,
        };
        let design = SpringDesign::from_spec(&geometry, &material).unwrap();
        assert!(close(design.mean_diameter_mm, 12.4, 1e-12));
        geometry.outside_diameter_mm = None;
        assert_eq!(SpringDesign::from_spec(&geometry, &material), Err(DesignError::MissingMeanDiameter));
    }

    #[test]
    fn every_bad_input_is_named() {
        let good = spring(1.6, 12.4, 6.25, [25.0, 30.0]);
        let cases: [(SpringDesign, &str); 6] = [
            (SpringDesign { wire_diameter_mm: 0.0, ..good }, "wire_diameter_mm"),
            (SpringDesign { mean_diameter_mm: f64::NAN, ..good }, "mean_diameter_mm"),
            (SpringDesign { body_coils: -2.0, ..good }, "body_coils"),
            (SpringDesign { modulus_n_per_mm2: f64::INFINITY, ..good }, "modulus_n_per_mm2"),
            (SpringDesign { leg_lengths_mm: [-1.0, 3.0], ..good }, "leg_lengths_mm[0]"),
            (SpringDesign { leg_lengths_mm: [1.0, f64::NAN], ..good }, "leg_lengths_mm[1]"),
        ];
        for (design, field) in cases {
            let err = design_rate(&design).unwrap_err();
            match &err {
                DesignError::NotPositive { field: f, .. } | DesignError::BadLegLength { field: f, .. } => {
                    assert_eq!(*f, field)
                }
                other => panic!("{field}: unexpected {other:?}"),
            }
            assert!(err.to_string().contains(field));
        }
        let inside_out = SpringDesign { mean_diameter_mm: 1.6, ..good };
        assert!(matches!(design_rate(&inside_out), Err(DesignError::CoilNotWiderThanWire { .. })));
        assert!(matches!(at_angle(&good, -5.0), Err(DesignError::BadDeflection { .. })));
        assert!(matches!(at_angle(&good, f64::NAN), Err(DesignError::BadDeflection { .. })));
        // 360·n·(w − 1) = 360 · 6.25 · 6.75 = 15 187.5° closes the coil.
        assert!(matches!(at_angle(&good, 16_000.0), Err(DesignError::WindsShut { .. })));
        assert!(at_angle(&good, 15_000.0).unwrap().inside_diameter_mm > 0.0);
    }

    #[test]
    fn geometry_outside_the_standards_scope_is_noted() {
        // Source: EN 13906-3:2014 Table 1, as quoted in the BSI catalogue entry for
        // BS EN 13906-3:2014: cold coiled, d ≤ 20 mm, n ≥ 2, 4 ≤ w ≤ 20.
        assert!(design_rate(&spring(1.6, 12.4, 6.25, [0.0, 0.0])).unwrap().scope_notes.is_empty());
        assert_eq!(design_rate(&spring(3.0, 9.0, 6.0, [0.0, 0.0])).unwrap().scope_notes.len(), 1);
        assert_eq!(design_rate(&spring(1.0, 25.0, 1.5, [0.0, 0.0])).unwrap().scope_notes.len(), 2);
    }

    #[test]
    fn json_carries_the_agreed_field_names() {
        let s = spring(1.6, 12.4, 6.25, [25.0, 30.0]);
        let with_angle = serde_json::to_value(theory(&s, Some(90.0)).unwrap()).unwrap();
        for key in [
            "active_coils",
            "rate_nmm_per_deg",
            "rate_nmm_per_turn",
            "rate_nmm_per_turn_empirical",
            "torque_nmm",
            "stress_mpa",
            "stress_factor_q",
            "stress_factor_wahl",
            "inside_diameter_mm",
            "mean_diameter_mm",
            "max_arbor_mm",
            "body_length_mm",
        ] {
            assert!(with_angle[key].is_number(), "{key} missing in {with_angle}");
        }
        let without = serde_json::to_value(theory(&s, None).unwrap()).unwrap();
        assert!(without["rate_nmm_per_deg"].is_number());
        assert!(without.get("torque_nmm").is_none());
    }

    proptest! {
        #[test]
        fn rate_scales_as_the_formula_says(
            d in 0.1f64..10.0,
            w in 1.5f64..30.0,
            n in 0.5f64..50.0,
            l1 in 0.0f64..200.0,
            l2 in 0.0f64..200.0,
            alpha in 0.0f64..720.0,
        ) {
            // Common practice, no published source: R ∝ d⁴/(D·n); a turn is 360°; the coil only
            // winds down under load; both curvature factors exceed 1.
            let s = spring(d, w * d, n, [l1, l2]);
            let r = design_rate(&s).unwrap();
            prop_assert!(close(r.rate_nmm_per_turn, 360.0 * r.rate_nmm_per_deg, 1e-12));
            let thicker = SpringDesign { wire_diameter_mm: 1.1 * d, ..s };
            let r2 = design_rate(&thicker).unwrap();
            prop_assert!(close(r2.rate_nmm_per_deg / r.rate_nmm_per_deg, 1.1f64.powi(4), 1e-9));
            if alpha < 360.0 * n * (w - 1.0) {
                let at = at_angle(&s, alpha).unwrap();
                prop_assert!(at.mean_diameter_mm <= s.mean_diameter_mm);
                prop_assert!(at.inside_diameter_mm > 0.0 && at.max_arbor_mm < at.inside_diameter_mm);
                prop_assert!(at.stress_factor_q > 1.0 && at.stress_factor_wahl > 1.0);
                prop_assert!(at.stress_mpa.is_finite() && at.stress_mpa >= 0.0);
            }
        }
    }
}
