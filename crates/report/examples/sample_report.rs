//! Writes a sample lot report, shift summary and test CSV to a folder, for looking at
//! the layout: `cargo run -p twistlot-report --example sample_report -- /tmp/out`.
//! All numbers are made up on the spot; nothing here is a check value.

use std::path::PathBuf;
use twistlot_model::Verdict;
use twistlot_report::*;

/// Small deterministic generator so the example needs no extra crates.
struct Lcg(u64);

impl Lcg {
    fn uniform(&mut self) -> f64 {
        self.0 = self.0.wrapping_mul(6364136223846793005).wrapping_add(1442695040888963407);
        ((self.0 >> 11) as f64) / ((1u64 << 53) as f64)
    }
    /// Sum of twelve uniforms, a rough bell shape with unit variance.
    fn bell(&mut self) -> f64 {
        (0..12).map(|_| self.uniform()).sum::<f64>() - 6.0
    }
}

fn main() -> Result<(), Box<dyn std::error::Error>> {
    let out = PathBuf::from(std::env::args().nth(1).unwrap_or_else(|| "/tmp/twistlot-sample".into()));
    std::fs::create_dir_all(&out)?;
    let mut rng = Lcg(7);

    let rates: Vec<f64> = (0..50).map(|_| 12.0 + 0.25 * rng.bell()).collect();
    let n = rates.len() as f64;
    let mean = rates.iter().sum::<f64>() / n;
    let sd = (rates.iter().map(|r| (r - mean).powi(2)).sum::<f64>() / (n - 1.0)).sqrt();

    let curves: Vec<CurveLine> = rates
        .iter()
        .enumerate()
        .take(30)
        .map(|(i, rate)| {
            let flagged = i == 3 || i == 17;
            let rate = if flagged { rate * 1.12 } else { *rate };
            let free = 2.0 + 0.5 * rng.bell();
            let mut angle_deg = Vec::new();
            let mut torque_nmm = Vec::new();
            for k in 0..=180 {
                let a = k as f64 * 0.5;
                angle_deg.push(a);
                torque_nmm.push((rate * (a - free)).max(0.0) + 8.0);
            }
            for k in (0..180).rev() {
                let a = k as f64 * 0.5;
                angle_deg.push(a);
                torque_nmm.push((rate * (a - free)).max(0.0) - 8.0);
            }
            CurveLine { label: format!("SN-{:04}", 1000 + i), angle_deg, torque_nmm, flagged }
        })
        .collect();
    let windows = [
        ToleranceWindow { angle_deg: 45.0, lower_nmm: Some(470.0), upper_nmm: Some(590.0) },
        ToleranceWindow { angle_deg: 80.0, lower_nmm: Some(860.0), upper_nmm: Some(1060.0) },
    ];
    let oc: Vec<(f64, f64)> = (0..=60)
        .map(|i| {
            let p = i as f64 * 0.25 / 100.0;
            // Binomial P(X <= 1) for n = 50: the shape of a c = 1 plan.
            let q = 1.0 - p;
            (p * 100.0, q.powi(50) + 50.0 * p * q.powi(49))
        })
        .collect();

    let report = LotReport {
        generated_at: "2024-05-14 06:12".into(),
        shift: "2024-05-14 early".into(),
        part: "TS-4410".into(),
        revision: "C".into(),
        customer: Some("Example Hinges Ltd".into()),
        spec_file: "specs/TS-4410-C.yaml".into(),
        lot: "L24-0517".into(),
        quantity: 1200,
        plan: PlanView {
            scheme: "MIL-STD-105E".into(),
            code_letter: Some("J".into()),
            inspection_level: Some("II".into()),
            aql_pct: Some(1.0),
            sample_size: 50,
            accept: Some(1),
            reject: Some(2),
            acceptability_k: None,
            severity: "normal".into(),
        },
        disposition: Disposition::Reject,
        grounds: vec![
            "2 nonconforming parts in a sample of 50; the plan rejects on 2.".into(),
            "Both fail rate (major).".into(),
        ],
        tested: 50,
        failed: 2,
        invalid: 1,
        flagged: vec![
            FlaggedPart {
                serial: Some("<script>alert(1)</script>".into()),
                file: "rig-b/0412.txt".into(),
                characteristic: "rate".into(),
                value: Some(13.61),
                lower: Some(11.2),
                upper: Some(12.8),
                verdict: Verdict::Fail,
                message: "rate 13.61 N·mm/° above 12.8".into(),
            },
            FlaggedPart {
                serial: None,
                file: "rig-a/0099.csv".into(),
                characteristic: "torque@45".into(),
                value: None,
                lower: Some(470.0),
                upper: Some(590.0),
                verdict: Verdict::Invalid,
                message: "curve stops at 38°, before the check angle".into(),
            },
        ],
        statistics: vec![CharacteristicStats {
            characteristic: "rate".into(),
            unit: "N·mm/°".into(),
            lower: Some(11.2),
            upper: Some(12.8),
            n: 50,
            mean: Some(mean),
            sd: Some(sd),
            min: rates.iter().copied().reduce(f64::min),
            max: rates.iter().copied().reduce(f64::max),
            cp: Some(1.07),
            cp_lower_95: Some(0.86),
            cpk: Some(1.01),
            cpk_lower_95: Some(0.80),
            pp: Some(1.05),
            ppk: Some(0.99),
            normality_p: Some(0.41),
            method: "normal".into(),
        }],
        rejected_files: vec![RejectedFile {
            file: "rig-c/0007.dat".into(),
            reason: "line 57, column `Torque`: `12,5x` is not a number".into(),
        }],
        cautions: default_cautions(),
        charts: Charts {
            rate_histogram_svg: rate_histogram_svg(
                &rates,
                Some(11.2),
                Some(12.8),
                Some(12.0),
                Some((mean, sd)),
                "rate (N·mm/°)",
            )?,
            curves_svg: curves_svg(&curves, &windows)?,
            oc_curve_svg: oc_curve_svg(&oc, Some((4.0, 0.40)), "n = 50, Ac 1 / Re 2 (normal)")?,
        },
    };

    let summary = ShiftSummary {
        shift: report.shift.clone(),
        generated_at: report.generated_at.clone(),
        files_total: 412,
        files_accepted: 409,
        files_rejected: report.rejected_files.clone(),
        lots: vec![
            LotLine {
                lot: report.lot.clone(),
                part: report.part.clone(),
                disposition: Disposition::Reject,
                tested: 50,
                failed: 2,
                invalid: 1,
                severity: "normal".into(),
                report_file: Some("lot-L24-0517.html".into()),
                grounds: report.grounds.clone(),
            },
            LotLine {
                lot: "L24-0518".into(),
                part: "TS-2200".into(),
                disposition: Disposition::Hold,
                tested: 12,
                failed: 0,
                invalid: 0,
                severity: "normal".into(),
                report_file: None,
                grounds: vec!["rig-b failed its reference-spring check".into()],
            },
            LotLine {
                lot: "L24-0519".into(),
                part: "TS-2200".into(),
                disposition: Disposition::Accept,
                tested: 32,
                failed: 0,
                invalid: 0,
                severity: "normal".into(),
                report_file: Some("lot-L24-0519.html".into()),
                grounds: vec!["0 nonconforming in 32; the plan accepts on 0.".into()],
            },
        ],
        cautions: default_cautions(),
    };

    let renderer = Renderer::new(&shipped_templates_dir(), None)?;
    std::fs::write(out.join("lot-L24-0517.html"), renderer.render("lot_report.html.j2", &report)?)?;
    std::fs::write(out.join("lot-L24-0517.md"), renderer.render("lot_report.md.j2", &report)?)?;
    std::fs::write(out.join("shift.html"), renderer.render("shift_summary.html.j2", &summary)?)?;
    std::fs::write(out.join("hist.svg"), report.charts.rate_histogram_svg.as_str())?;
    std::fs::write(out.join("curves.svg"), report.charts.curves_svg.as_str())?;
    std::fs::write(out.join("oc.svg"), report.charts.oc_curve_svg.as_str())?;
    let rows = TestsCsv {
        rows: vec![TestRow {
            test_id: "0412".into(),
            file: "rig-b/0412.txt".into(),
            serial: Some("SN, \"odd\"".into()),
            part: Some("TS-4410".into()),
            lot: Some("L24-0517".into()),
            rig: Some("rig-b".into()),
            operator: None,
            rate_nmm_per_deg: Some(13.61),
            free_angle_deg: Some(1.9),
            max_torque_nmm: None,
            verdict: Verdict::Fail,
            findings: "rate: 13.61 above 12.8".into(),
        }],
    };
    std::fs::write(out.join("tests.csv"), renderer.render("tests.csv.j2", &rows)?)?;
    println!("wrote {}", out.display());
    Ok(())
}
