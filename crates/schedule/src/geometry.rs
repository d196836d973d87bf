//! The spring's inside diameter when its coils wind down under test, which decides the
//! arbor a rig may use for it.

/// Mean coil diameter D' when the spring is deflected by `angle_deg` in the winding
/// direction, mm: D' = D·n / (n + α/360) (EN 13906-3 form).
///
/// The wire keeps its length, so turning the leg through α adds α/360 of a turn to the
/// `active_coils` n and the coils close in. Deflection against the winding direction
/// (which opens the coils) is not what a torsion spring is loaded in; pass a positive angle.
pub fn wound_down_mean_diameter_mm(mean_d_mm: f64, active_coils: f64, angle_deg: f64) -> f64 {
    mean_d_mm * active_coils / (active_coils + angle_deg / 360.0)
}

/// Inside coil diameter D' − d at `angle_deg`, mm: what an arbor must clear.
pub fn wound_down_inside_diameter_mm(
    mean_d_mm: f64,
    wire_d_mm: f64,
    active_coils: f64,
    angle_deg: f64,
) -> f64 {
    wound_down_mean_diameter_mm(mean_d_mm, active_coils, angle_deg) - wire_d_mm
}

/// Share of the wound-down inside diameter an arbor may take (common practice: about 90 %).
pub const ARBOR_CLEARANCE_SHARE: f64 = 0.9;

/// Largest arbor diameter that still clears the wound-down spring, mm.
pub fn largest_arbor_mm(wound_down_inside_d_mm: f64) -> f64 {
    ARBOR_CLEARANCE_SHARE * wound_down_inside_d_mm
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn wound_down_diameter_follows_the_en_13906_3_form() {
        // From memory: EN 13906-3, D' = D·n/(n + α/360) (as DESIGN.md §2 quotes it).
        // By hand: D = 14 mm, n = 5.5, α = 90° → D' = 14·5.5/(5.5 + 0.25) = 77/5.75 = 13.391304… mm;
        // with d = 1.6 mm the inside diameter is 11.791304… mm.
        assert!((wound_down_mean_diameter_mm(14.0, 5.5, 90.0) - 13.391_304_347_826).abs() < 1e-9);
        assert!((wound_down_inside_diameter_mm(14.0, 1.6, 5.5, 90.0) - 11.791_304_347_826).abs() < 1e-9);
        // From memory: EN 13906-3 form; a full turn on n = 4 coils gives D' = D·4/5 (by hand: 20 → 16 mm).
        assert!((wound_down_mean_diameter_mm(20.0, 4.0, 360.0) - 16.0).abs() < 1e-12);
        // Unloaded, nothing changes (α = 0).
        assert_eq!(wound_down_mean_diameter_mm(20.0, 4.0, 0.0), 20.0);
    }

    #[test]
    fn arbor_limit_is_ninety_percent() {
        // Common practice, no published source: an arbor at or below about 90 % of the
        // wound-down inside diameter (by hand: 0.9 × 11.0 = 9.9 mm).
        assert!((largest_arbor_mm(11.0) - 9.9).abs() < 1e-12);
    }
}
