//! `twistlot sampling`: look a plan up in a scheme's tables, or design one from risks.

use super::{open, OutputFormat, PlantArgs};
use crate::output::{print_rows, Table};
use anyhow::{bail, Result};
use std::process::ExitCode;
use twistlot_model::Severity;
use twistlot_sampling::{design_attribute, design_variables, InspectionLevel, LimitKind};

/// Arguments of `twistlot sampling`.
#[derive(clap::Args)]
pub struct Args {
    #[command(subcommand)]
    design: Option<Design>,
    /// Lot size.
    #[arg(long)]
    lot_size: Option<u64>,
    /// AQL, percent defective (a value of the scheme's AQL series).
    #[arg(long)]
    aql: Option<f64>,
    /// Inspection level: I, II, III, S-1 … S-4.
    #[arg(long, default_value = "II", value_parser = parse_level)]
    level: InspectionLevel,
    /// Severity: normal, tightened, reduced.
    #[arg(long, default_value = "normal", value_parser = parse_severity)]
    severity: Severity,
    /// Sampling-scheme plugin to use.
    #[arg(long, default_value = "mil-std-105e")]
    scheme: String,
    #[command(flatten)]
    plant: PlantArgs,
    /// How to print the result.
    #[arg(long, value_enum, default_value = "table")]
    format: OutputFormat,
}

fn parse_level(text: &str) -> Result<InspectionLevel, String> {
    text.parse().map_err(|e: twistlot_sampling::SamplingError| e.to_string())
}

fn parse_severity(text: &str) -> Result<Severity, String> {
    text.parse().map_err(|e: twistlot_model::UnknownLabel| e.to_string())
}

#[derive(clap::Subcommand)]
enum Design {
    /// Design the smallest plan that meets an AQL at risk α and an LTPD at risk β.
    Design {
        /// AQL, percent defective.
        #[arg(long)]
        aql: f64,
        /// Producer's risk at the AQL.
        #[arg(long, default_value_t = 0.05)]
        alpha: f64,
        /// LTPD, percent defective.
        #[arg(long)]
        ltpd: f64,
        /// Consumer's risk at the LTPD.
        #[arg(long, default_value_t = 0.10)]
        beta: f64,
        /// A variables (k-method) plan instead of an attribute plan.
        #[arg(long)]
        variables: bool,
        /// For a variables plan: the process σ is known.
        #[arg(long, requires = "variables")]
        sigma_known: bool,
        /// For a variables plan: two-sided limits.
        #[arg(long, requires = "variables")]
        double_limit: bool,
        /// How to print the result.
        #[arg(long, value_enum, default_value = "table")]
        format: OutputFormat,
    },
}

#[derive(serde::Serialize)]
struct Designed {
    kind: &'static str,
    sample_size: u64,
    #[serde(skip_serializing_if = "Option::is_none")]
    accept: Option<u64>,
    #[serde(skip_serializing_if = "Option::is_none")]
    k: Option<f64>,
    #[serde(skip_serializing_if = "Option::is_none")]
    sigma_known: Option<bool>,
    oc: Vec<twistlot_sampling::OcPoint>,
}

/// Runs the command.
pub fn run(args: Args) -> Result<ExitCode> {
    match args.design {
        Some(Design::Design { aql, alpha, ltpd, beta, variables, sigma_known, double_limit, format }) => {
            let designed = if variables {
                let limits = if double_limit { LimitKind::Double } else { LimitKind::Single };
                let plan = design_variables(aql, alpha, ltpd, beta, sigma_known, limits)?;
                Designed {
                    kind: "variables",
                    sample_size: plan.sample_size,
                    accept: None,
                    k: Some(plan.k),
                    sigma_known: Some(sigma_known),
                    oc: plan.oc,
                }
            } else {
                let plan = design_attribute(aql, alpha, ltpd, beta)?;
                Designed {
                    kind: "attribute",
                    sample_size: plan.sample_size,
                    accept: Some(plan.accept),
                    k: None,
                    sigma_known: None,
                    oc: plan.oc,
                }
            };
            print_design(&designed, sigma_known, format)?;
        }
        None => {
            let (Some(lot_size), Some(aql)) = (args.lot_size, args.aql) else {
                bail!("give --lot-size and --aql (or use `twistlot sampling design`)");
            };
            let plant = open(&args.plant.options(None))?;
            let Some(scheme) = plant.schemes.get(&args.scheme) else {
                let known: Vec<&str> = plant.schemes.keys().map(String::as_str).collect();
                bail!(
                    "there is no sampling-scheme plugin named `{}` (known: {})",
                    args.scheme,
                    known.join(", ")
                );
            };
            let plan = scheme.plan(lot_size, args.level, aql, args.severity)?;
            if args.format == OutputFormat::Json {
                println!("{}", serde_json::to_string_pretty(&plan)?);
            } else {
                let mut table = Table::new(&[
                    "code_letter",
                    "sample_size",
                    "accept",
                    "reject",
                    "severity",
                    "hundred_percent",
                ]);
                table.row(vec![
                    plan.code_letter.clone(),
                    plan.sample_size.to_string(),
                    plan.accept.to_string(),
                    plan.reject.to_string(),
                    plan.severity.as_str().to_string(),
                    plan.hundred_percent.to_string(),
                ]);
                print_rows(&table, args.format == OutputFormat::Csv);
            }
        }
    }
    Ok(ExitCode::SUCCESS)
}

fn print_design(designed: &Designed, sigma_known: bool, format: OutputFormat) -> Result<()> {
    if format == OutputFormat::Json {
        println!("{}", serde_json::to_string_pretty(designed)?);
        return Ok(());
    }
    match (designed.accept, designed.k) {
        (Some(c), _) => println!(
            "attribute plan: sample {} parts, accept the lot with at most {c} defective",
            designed.sample_size
        ),
        (_, Some(k)) => println!(
            "variables plan (σ {}): sample {} parts, accept when (limit − mean)/{} ≥ k = {k:.4}",
            if sigma_known { "known" } else { "unknown" },
            designed.sample_size,
            if sigma_known { "σ" } else { "s" }
        ),
        _ => {}
    }
    let mut table = Table::new(&["defective_pct", "p_accept"]);
    for point in designed.oc.iter().step_by(5) {
        table.row(vec![format!("{:.2}", point.defective_pct), format!("{:.4}", point.p_accept)]);
    }
    print_rows(&table, format == OutputFormat::Csv);
    Ok(())
}
