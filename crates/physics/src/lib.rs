//! Torsion-spring physics for twistlot: the design calculator and the free-swing
//! (dynamic) rate analysis.
//!
//! For: what a spring's drawing geometry predicts (EN 13906-3 forms: active coils with the
//! legs' share, rate per degree and per turn with the handbooks' empirical per-turn value
//! alongside, torque, bending stress with the curvature factor q and the Wahl-type factor,
//! wound-down diameters, the largest arbor, body length) — [`design_rate`], [`at_angle`],
//! [`theory`] — and what a free-decay record of a spring swinging a known inertia measures
//! (period, logarithmic decrement, damping ratio, torsion constant κ = I·ω0², dynamic rate,
//! amplitude dependence of the period, dry-friction decay, the two-inertia method) —
//! [`analyze_swing`], [`two_inertia`]. A record that cannot carry a number is refused with
//! the reason, never given one. [`SwingAnalysis::metrics`] gives the figures a test record
//! carries (`twistlot_model::SwingMetrics`).
//!
//! Not for: reading files or rig formats (the ingest crate turns exports into plain
//! slices), judging results against a spec (stats), or printing. Everything here is a pure
//! function of plain numbers. The values are theoretical or measured figures for the
//! engineer; the customer's drawing and specification govern acceptance, and local codes
//! and licensed practice govern stresses and safety.
//!
//! Main types: [`SpringDesign`], [`DesignRate`], [`AtAngle`], [`Theory`], [`DesignError`];
//! [`SwingOptions`], [`SwingAnalysis`], [`SwingPeak`], [`DecayShape`], [`TwoInertia`],
//! [`SwingError`].

#![warn(missing_docs)]

pub mod design;
mod fit;
pub mod swing;

pub use design::{
    at_angle, bending_stress_mpa, curvature_factor_q, design_rate, leg_coils, theory, wahl_bending_factor,
    wound_down_mean_diameter_mm, AtAngle, DesignError, DesignRate, SpringDesign, Theory,
    EMPIRICAL_CONSTANT_PER_TURN, RATE_CONSTANT_PER_DEG, RATE_CONSTANT_PER_TURN,
};
pub use swing::{
    analyze_swing, damping_ratio_from_decrement, kappa_from_period_nmm_per_rad, natural_period_s,
    rate_from_kappa_nmm_per_deg, two_inertia, DecayShape, SwingAnalysis, SwingError, SwingOptions, SwingPeak,
    TwoInertia,
};
