//! `twistlot theory`: what a spring's drawing geometry predicts (EN 13906-3 forms).

use crate::output::{print_rows, Table};
use anyhow::{Context, Result};
use clap::ValueEnum;
use std::path::PathBuf;
use std::process::ExitCode;
use twistlot_model::PartSpec;
use twistlot_physics::{theory, DesignError, SpringDesign, Theory};

/// Printed after every calculation: these are design values a person may act on.
pub const THEORY_CAUTION: &str = "Caution: these are theoretical values from the EN 13906-3 design \
formulas, not measurements, and the empirical per-turn rate is a handbook figure. The customer's drawing \
and specification govern; whether a stress, an arbor or a clearance is acceptable is for a licensed \
engineer to judge under local codes. A loaded torsion spring stores energy and can leave a fixture violently.";

/// How `theory` prints.
#[derive(Clone, Copy, ValueEnum, PartialEq, Eq)]
pub enum TheoryFormat {
    /// Aligned lines for a terminal.
    Table,
    /// Pretty-printed JSON.
    Json,
}

/// Arguments of `twistlot theory`.
#[derive(clap::Args)]
#[command(group(clap::ArgGroup::new("geometry").multiple(true).args(["wire_d", "mean_d", "coils", "legs", "modulus"])))]
pub struct Args {
    /// Wire diameter d, mm.
    #[arg(long, value_name = "MM", required_unless_present = "spec")]
    wire_d: Option<f64>,
    /// Mean coil diameter D, mm.
    #[arg(long, value_name = "MM", required_unless_present = "spec")]
    mean_d: Option<f64>,
    /// Body coils (the coiled part only; the legs' share is added).
    #[arg(long, value_name = "N", required_unless_present = "spec")]
    coils: Option<f64>,
    /// Straight leg lengths l1,l2 from the coil's axis, mm (default 0,0: no legs).
    #[arg(long, value_name = "MM,MM", value_parser = parse_legs)]
    legs: Option<[f64; 2]>,
    /// Young's modulus E, N/mm² (about 206000 for patented and oil-tempered steel wire, 185000 for stainless).
    #[arg(long, value_name = "N_PER_MM2", required_unless_present = "spec")]
    modulus: Option<f64>,
    /// Take geometry and modulus from this part spec instead.
    #[arg(long, value_name = "FILE", conflicts_with = "geometry")]
    spec: Option<PathBuf>,
    /// Deflection from the free position, degrees, for torque, stress and wound-down size.
    /// Without it: none; with --spec: the deflection at the spec's largest test angle
    /// (test.max_angle_deg less the nominal free angle).
    #[arg(long, value_name = "DEG")]
    angle: Option<f64>,
    /// How to print the result.
    #[arg(long, value_enum, default_value = "table")]
    format: TheoryFormat,
}

fn parse_legs(text: &str) -> Result<[f64; 2], String> {
    let (l1, l2) = text.split_once(',').ok_or_else(|| format!("`{text}` is not MM,MM (e.g. 25,30)"))?;
    let number =
        |s: &str| s.trim().parse::<f64>().map_err(|_| format!("`{}` is not a length in mm", s.trim()));
    Ok([number(l1)?, number(l2)?])
}

/// The deflection at the spec's largest test angle: the rig's angle less the free angle.
fn spec_deflection_deg(spec: &PartSpec) -> f64 {
    let free = spec.characteristics.free_angle_deg.as_ref().map_or(0.0, |f| f.nominal);
    (spec.test.max_angle_deg - free).max(0.0)
}

/// Runs the command.
pub fn run(args: Args) -> Result<ExitCode> {
    let (design, angle, source, arbor) = match &args.spec {
        Some(path) => {
            let text =
                std::fs::read_to_string(path).with_context(|| format!("cannot read {}", path.display()))?;
            let spec = PartSpec::from_yaml(&path.display().to_string(), &text)?;
            let design = SpringDesign::from_spec(&spec.geometry, &spec.material)
                .with_context(|| format!("the geometry of {} gives no design", path.display()))?;
            let angle = args.angle.or(Some(spec_deflection_deg(&spec)));
            let source = format!("{} (part {}, revision {})", path.display(), spec.part, spec.revision);
            (design, angle, source, spec.test.arbor_diameter_mm)
        }
        None => {
            // clap has made sure all four are present without --spec.
            let design = SpringDesign {
                wire_diameter_mm: args.wire_d.unwrap_or(f64::NAN),
                mean_diameter_mm: args.mean_d.unwrap_or(f64::NAN),
                body_coils: args.coils.unwrap_or(f64::NAN),
                leg_lengths_mm: args.legs.unwrap_or([0.0, 0.0]),
                modulus_n_per_mm2: args.modulus.unwrap_or(f64::NAN),
            };
            (design, args.angle, "the command line".to_string(), None)
        }
    };
    let result = match theory(&design, angle) {
        Ok(result) => result,
        // Numbers that cannot make a spring are bad arguments (or a spec that needs fixing).
        Err(err) => return Ok(bad_input(&err, args.spec.is_some())),
    };
    match args.format {
        TheoryFormat::Json => println!("{}", serde_json::to_string_pretty(&result)?),
        TheoryFormat::Table => print_table(&result, &source, arbor),
    }
    eprintln!("{THEORY_CAUTION}");
    Ok(ExitCode::SUCCESS)
}

fn bad_input(err: &DesignError, from_spec: bool) -> ExitCode {
    if from_spec {
        eprintln!("twistlot theory: the spec's geometry cannot be used: {err}");
        ExitCode::FAILURE
    } else {
        eprintln!("twistlot theory: {err}");
        ExitCode::from(2)
    }
}

fn print_table(result: &Theory, source: &str, arbor_mm: Option<f64>) {
    let v = |x: f64, places: usize| format!("{x:.places$}");
    let d = &result.design;
    let r = &result.rate;
    println!("Theoretical values from {source} (EN 13906-3 forms):\n");
    let mut table = Table::new(&["quantity", "value", "unit"]);
    let mut row = |q: &str, value: String, unit: &str| table.row(vec![q.into(), value, unit.into()]);
    row("wire diameter d", v(d.wire_diameter_mm, 3), "mm");
    row("mean coil diameter D", v(d.mean_diameter_mm, 3), "mm");
    row("body coils", v(d.body_coils, 3), "");
    row("leg lengths l1, l2", format!("{}, {}", d.leg_lengths_mm[0], d.leg_lengths_mm[1]), "mm");
    row("modulus E", v(d.modulus_n_per_mm2, 0), "N/mm²");
    row("spring index w = D/d", v(r.spring_index, 3), "");
    row(
        "active coils n (legs add (l1 + l2)/(3π·D))",
        format!("{} (+{})", v(r.active_coils, 3), v(r.leg_coils, 3)),
        "",
    );
    row("rate E·d⁴/(3667·D·n)", v(r.rate_nmm_per_deg, 5), "N·mm/°");
    row("rate per turn, theoretical (10.19)", v(r.rate_nmm_per_turn, 3), "N·mm/turn");
    row("rate per turn, handbooks' empirical (10.8)", v(r.rate_nmm_per_turn_empirical, 3), "N·mm/turn");
    if let Some(a) = &result.at_angle {
        let at = format!("at {}°", a.deflection_deg);
        row(&format!("torque {at}"), v(a.torque_nmm, 2), "N·mm");
        row(
            &format!("bending stress {at}, factor q = {}", v(a.stress_factor_q, 3)),
            v(a.stress_mpa, 1),
            "MPa",
        );
        row(
            &format!("bending stress {at}, Wahl-type factor {}", v(a.stress_factor_wahl, 3)),
            v(a.stress_wahl_mpa, 1),
            "MPa",
        );
        row(&format!("wound-down mean diameter {at}"), v(a.mean_diameter_mm, 3), "mm");
        row(&format!("wound-down inside diameter {at}"), v(a.inside_diameter_mm, 3), "mm");
        row("largest arbor (90 % of that, common practice)", v(a.max_arbor_mm, 3), "mm");
        row(&format!("body length {at}, close-wound"), v(a.body_length_mm, 3), "mm");
    }
    print_rows(&table, false);
    if let (Some(a), Some(arbor)) = (&result.at_angle, arbor_mm) {
        let verdict = if arbor <= a.max_arbor_mm { "within" } else { "ABOVE" };
        println!(
            "\nThe spec's arbor of {arbor} mm is {verdict} the largest arbor of {} mm at {}°.",
            v(a.max_arbor_mm, 3),
            a.deflection_deg
        );
    }
    for note in &r.scope_notes {
        println!("note: {note}");
    }
}
