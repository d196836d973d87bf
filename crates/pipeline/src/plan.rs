//! The plan run: a shift's lot list turned into a test plan across the plant's rigs, and
//! the plan's outputs — `plan.json` (which the shift run reads back), `plan.html` with a
//! Gantt chart, and one work list per rig for the operators.
//!
//! For each listed lot the run works out what its part needs, then hands the lots to
//! `twistlot_schedule::plan`:
//! - **samples**: the largest n over the plans the part's spec asks for
//!   (`twistlot_sampling::required_sample`: every sampled class's attribute plan and the
//!   variables plan), at the severity the part stands on before the shift, replayed from
//!   the plant's switching record ([`crate::switching`]); normal when the plant keeps no
//!   record. A rejection earlier in the same shift can still tighten a later lot: the
//!   plan cannot know outcomes, and the shift run uses the severity the lot actually has.
//! - **largest test torque**: the larger of (a) the upper limit of every toleranced torque
//!   of the spec and (b) the rate's upper limit times the deflection at the test's largest
//!   angle (that angle less the nominal free angle): the most a conforming part can put
//!   on the load cell, which must read it inside 10–90 % of its capacity.
//! - **wound-down inside diameter**: D' − d at that deflection over the body coils
//!   (`twistlot_schedule::wound_down_inside_diameter_mm`, EN 13906-3 form; the body coils
//!   alone err towards a smaller diameter, the safe side for an arbor), from the lot's
//!   measured mean and wire diameters when the lot list gives them, else the spec's.
//! - **fixture**: the spec's `notes: { fixture: NAME }`, else the part number (each part
//!   is taken to need its own leg clamp setting); a change of fixture or arbor costs the
//!   rig's setup time.
//!
//! Lots whose needs cannot be worked out (no spec, no sampling agreement…) are listed
//! among the plan's unscheduled lots with the reason, so none goes unmentioned.

use crate::dispatch::{DispatchError, DispatchRule};
use crate::open::OpenPlant;
use crate::outputs::{lot_file_name, write_atomic};
use crate::plugins::PluginError;
use crate::shift::{read_lot_list, ShiftError, LOT_LIST};
use crate::sink::SinkError;
use crate::switching::{conditions, describe_standing, part_rules, PartStanding, SwitchingRecord};
use serde::Serialize;
use std::path::{Path, PathBuf};
use twistlot_model::{InspectionState, ListedLot, PartSpec, PlantTime, Rig};
use twistlot_report as report;
use twistlot_schedule::{
    wound_down_inside_diameter_mm, Budget, Job, JobView, PartNeeds, Plan, PlanError, PlanOptions, Planner,
    Rule, ShiftWindow, Unplanned, Unscheduled,
};

/// The plan's file name in the output folder; `twistlot shift` looks for it there.
pub const PLAN_FILE: &str = "plan.json";
/// The plan page's file name.
pub const PLAN_HTML: &str = "plan.html";

/// Why a shift could not be planned.
#[derive(Debug, thiserror::Error)]
pub enum PlanRunError {
    /// Planning needs the plant config (rigs, specs).
    #[error("planning needs a plant config with its rigs: give --plant FILE")]
    NoPlant,
    /// The lot list cannot be read.
    #[error(transparent)]
    LotList(#[from] ShiftError),
    /// The lot list gives no shift hours.
    #[error(
        "{} gives no shift hours; add a line `shift: {{ start: \"YYYY-MM-DDTHH:MM\", end: \"YYYY-MM-DDTHH:MM\" }}` above `lots:`",
        .0.display()
    )]
    NoShiftHours(PathBuf),
    /// The plant config lists no rig.
    #[error("the plant config {} lists no rigs under `rigs:`, so there is nothing to plan on", .0.display())]
    NoRigs(PathBuf),
    /// The plant's history cannot be opened or read.
    #[error("cannot read each part's switching standing from the plant's history")]
    History(#[source] crate::history::HistoryOpenError),
    /// The dispatch rule the plant config names is not there.
    #[error("cannot find the plant's dispatch rule")]
    Plugins(#[source] PluginError),
    /// The dispatch rule does not compile.
    #[error(transparent)]
    Rule(#[from] DispatchError),
    /// The planner refused its input.
    #[error("the planner cannot work with the input: {0}")]
    Planner(#[from] PlanError),
    /// An output could not be written.
    #[error(transparent)]
    Write(#[from] SinkError),
    /// The plan page or a work list could not be rendered.
    #[error("cannot render {what}")]
    Render {
        /// Which document.
        what: String,
        /// Why.
        #[source]
        source: report::ReportError,
    },
    /// The plant's templates cannot be set up.
    #[error(transparent)]
    Open(#[from] crate::open::OpenError),
}

/// What one listed lot needs, as the plan run worked it out (or why it could not).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct LotNeeds {
    /// Lot.
    pub lot: String,
    /// Part number.
    pub part: String,
    /// Parts in the lot.
    pub quantity: u64,
    /// When it is ready.
    pub ready: Option<PlantTime>,
    /// When it must ship.
    pub ship_by: Option<PlantTime>,
    /// Its weight.
    pub weight: f64,
    /// Where the part stands before the shift (absent when it could not be told).
    pub severity: Option<InspectionState>,
    /// Parts to test.
    pub samples: Option<u64>,
    /// Which plan sets the sample size, and how the part came to its severity.
    pub sample_basis: String,
    /// Largest test torque, N·mm.
    pub max_torque_nmm: Option<f64>,
    /// How the largest torque was found.
    pub torque_basis: String,
    /// Largest leg angle the test drives to, degrees.
    pub max_angle_deg: Option<f64>,
    /// Deflection at that angle (angle less the nominal free angle), degrees.
    pub deflection_deg: Option<f64>,
    /// Inside diameter wound down at that deflection, mm.
    pub wound_down_inside_d_mm: Option<f64>,
    /// Fixture, as the plant names it.
    pub fixture: Option<String>,
    /// Why the lot could not be planned, when it could not.
    pub problem: Option<String>,
}

/// The dispatch rule a plan was made with.
#[derive(Debug, Clone, PartialEq, Eq, Serialize)]
pub struct RuleUsed {
    /// Plugin name.
    pub name: String,
    /// Its expression.
    pub expression: String,
}

/// A planned shift: the plan and what it was made from. Serialises to `plan.json`: the
/// plan's own fields (`assignments`, `checks`, `unscheduled`, `refusals`, `metrics`,
/// times as plant-local ISO 8601) beside the shift, the lots' needs and the rule used.
#[derive(Debug, Clone, Serialize)]
pub struct PlannedShift {
    /// Shift name (the shift folder's name).
    pub shift: String,
    /// Plant name.
    pub plant: String,
    /// The lot list planned.
    pub lot_list: String,
    /// When the plan was made (UTC, RFC 3339).
    pub generated_at: String,
    /// The dispatch rule, when the plant config names one (else the ATCS index).
    pub dispatch_rule: Option<RuleUsed>,
    /// Lots the dispatch rule could not rank (they went last).
    pub rule_errors: Vec<String>,
    /// The plan.
    #[serde(flatten)]
    pub plan: Plan,
    /// Every listed lot's needs, in lot-list order.
    pub lots: Vec<LotNeeds>,
    /// Plain-word notes for the reader.
    pub notes: Vec<String>,
    /// The rigs planned on (for the chart and the work lists).
    #[serde(skip)]
    pub rigs: Vec<Rig>,
}

/// The largest torque a conforming part puts on the load cell during its test, with how
/// it was found (see the module doc); `None` when the spec gives neither a torque nor a rate.
pub fn largest_test_torque(spec: &PartSpec) -> Option<(f64, String)> {
    let mut best: Option<(f64, String)> = None;
    let mut offer = |value: f64, basis: String| {
        if value.is_finite() && value > 0.0 && best.as_ref().is_none_or(|(b, _)| value > *b) {
            best = Some((value, basis));
        }
    };
    for torque in &spec.characteristics.torque_at {
        if let Some(upper) = torque.limits().upper {
            offer(upper, format!("upper limit of the torque at {}°", torque.angle_deg));
        }
    }
    if let Some(rate) = &spec.characteristics.rate_nmm_per_deg {
        if let Some(upper) = rate.limits().upper {
            let deflection = test_deflection_deg(spec);
            offer(
                upper * deflection,
                format!("rate upper limit {upper:.4} N·mm/° × {deflection}° deflection at the test's largest angle"),
            );
        }
    }
    best
}

/// The deflection at the test's largest angle: that angle less the nominal free angle
/// (the angle itself when the spec gives no free angle, or one past it).
pub fn test_deflection_deg(spec: &PartSpec) -> f64 {
    let max_angle = spec.test.max_angle_deg;
    let free = spec.characteristics.free_angle_deg.as_ref().map_or(0.0, |f| f.nominal);
    let deflection = max_angle - free;
    if deflection > 0.0 {
        deflection
    } else {
        max_angle
    }
}

/// What a listed lot needs from a rig, or why that cannot be told.
fn lot_needs(
    plant: &OpenPlant,
    record: Option<&SwitchingRecord>,
    shift_lots: &[String],
    listed: &ListedLot,
) -> (LotNeeds, Option<PartNeeds>) {
    let mut needs = LotNeeds {
        lot: listed.lot.clone(),
        part: listed.part.clone(),
        quantity: listed.quantity,
        ready: listed.ready,
        ship_by: listed.ship_by,
        weight: listed.weight,
        severity: None,
        samples: None,
        sample_basis: String::new(),
        max_torque_nmm: None,
        torque_basis: String::new(),
        max_angle_deg: None,
        deflection_deg: None,
        wound_down_inside_d_mm: None,
        fixture: None,
        problem: None,
    };
    let fail = |mut needs: LotNeeds, problem: String| {
        needs.problem = Some(problem);
        (needs, None)
    };
    let Some(entry) = plant.specs.get(&listed.part) else {
        return fail(needs, format!("no spec for part `{}` in the plant's parts folder", listed.part));
    };
    let spec = &entry.spec;
    let Some(sampling) = &spec.sampling else {
        return fail(needs, format!("the spec for `{}` names no sampling agreement", spec.part));
    };
    let (Some(scheme), Some(rules)) = (plant.schemes.get(&sampling.scheme), part_rules(spec, &plant.schemes))
    else {
        return fail(needs, format!("there is no sampling-scheme plugin named `{}`", sampling.scheme));
    };
    let standing = match record {
        // The part's standing before any of this shift's lots, as the shift run replays it.
        Some(record) => record.standing_before(&spec.part, shift_lots, rules, &conditions(plant, &spec.part)),
        None => PartStanding::fresh(),
    };
    needs.severity = Some(standing.inspection_state());
    let required =
        match twistlot_sampling::required_sample(spec, scheme, listed.quantity, standing.state.severity) {
            Ok(required) => required,
            Err(err) => return fail(needs, format!("the sample size cannot be worked out: {err}")),
        };
    let how = match record {
        Some(_) => describe_standing(&standing, rules),
        None => "inspection severity normal: the plant keeps no switching record".to_string(),
    };
    needs.sample_basis = format!("{} sets n {}; {how}", required.set_by, required.sample_size);
    if standing.state.discontinued {
        needs.sample_basis.push_str(
            "; acceptance is discontinued, so no lot of the part is accepted until corrective action is recorded",
        );
    }
    needs.samples = Some(required.sample_size);
    let Some((torque, basis)) = largest_test_torque(spec) else {
        return fail(
            needs,
            "the spec gives neither a rate nor a torque, so no load cell can be chosen".into(),
        );
    };
    needs.max_torque_nmm = Some(torque);
    needs.torque_basis = basis;
    needs.max_angle_deg = Some(spec.test.max_angle_deg);
    let deflection = test_deflection_deg(spec);
    needs.deflection_deg = Some(deflection);
    let Some(mean_d) = listed.mean_d_mm.or_else(|| spec.geometry.mean_diameter()) else {
        return fail(needs, "the spec gives no coil diameter, so no arbor can be chosen".into());
    };
    let wire_d = listed.wire_d_mm.unwrap_or(spec.geometry.wire_diameter_mm);
    let inside = wound_down_inside_diameter_mm(mean_d, wire_d, spec.geometry.body_coils, deflection);
    if !(inside.is_finite() && inside > 0.0) {
        return fail(
            needs,
            format!(
                "the coils wind shut before {deflection}° of deflection, so no arbor fits (check the spec)"
            ),
        );
    }
    needs.wound_down_inside_d_mm = Some(inside);
    let fixture = spec.notes.get("fixture").cloned().unwrap_or_else(|| spec.part.clone());
    needs.fixture = Some(fixture.clone());
    let part_needs = PartNeeds {
        samples: u32::try_from(required.sample_size).unwrap_or(u32::MAX).max(1),
        max_torque_nmm: torque,
        max_angle_deg: spec.test.max_angle_deg,
        cycles: spec.test.pre_cycles.saturating_add(1),
        wound_down_inside_d_mm: inside,
        fixture,
    };
    (needs, Some(part_needs))
}

/// Plans the shift in `shift_dir` on the plant's rigs, within `budget` of local search.
pub fn plan_shift(plant: &OpenPlant, shift_dir: &Path, budget: Budget) -> Result<PlannedShift, PlanRunError> {
    let config = plant.config.as_ref().ok_or(PlanRunError::NoPlant)?;
    let list = read_lot_list(shift_dir)?;
    let lot_list = shift_dir.join(LOT_LIST);
    let hours = list.shift.ok_or_else(|| PlanRunError::NoShiftHours(lot_list.clone()))?;
    if config.rigs.is_empty() {
        return Err(PlanRunError::NoRigs(config.path.clone()));
    }
    let shift = shift_dir.file_name().map(|n| n.to_string_lossy().to_string()).unwrap_or_default();
    let history =
        crate::history::open_history(plant, crate::history::Access::Read).map_err(PlanRunError::History)?;
    let record = match &history {
        Some(h) => Some(crate::history::switching_record(h).map_err(PlanRunError::History)?),
        None => None,
    };

    let shift_lots: Vec<String> = list.lots.iter().map(|l| l.lot.clone()).collect();
    let mut jobs = Vec::new();
    let mut lots = Vec::new();
    for listed in &list.lots {
        let (needs, part) = lot_needs(plant, record.as_ref(), &shift_lots, listed);
        if let Some(part) = part {
            jobs.push(Job::from_listed(listed, part));
        }
        lots.push(needs);
    }
    let rule = match &config.dispatch_rule {
        Some(name) => {
            Some(DispatchRule::new(&plant.catalog.dispatch_rule(name).map_err(PlanRunError::Plugins)?)?)
        }
        None => None,
    };
    let planner = Planner::new(ShiftWindow { start: hours.start, end: hours.end }, &config.rigs, &jobs)?;
    let (mut plan, rule_errors) = match &rule {
        Some(rule) => {
            let compiled = rule.compiled()?;
            let priority = |view: &JobView<'_>| compiled.priority(view);
            let plan = planner.plan(&PlanOptions { rule: Rule::Custom(&priority), search: Some(budget) });
            (plan, compiled.errors())
        }
        None => (planner.plan(&PlanOptions { rule: Rule::Atcs, search: Some(budget) }), Vec::new()),
    };
    for needs in lots.iter().filter(|n| n.problem.is_some()) {
        plan.unscheduled.push(Unscheduled {
            lot: needs.lot.clone(),
            part: needs.part.clone(),
            samples: needs.samples.map_or(0, |n| u32::try_from(n).unwrap_or(u32::MAX)),
            reason: Unplanned::NotPlannable { reason: needs.problem.clone().unwrap_or_default() },
        });
        plan.metrics.lots_unscheduled += 1;
        plan.metrics.unscheduled_weight += needs.weight;
    }
    let order = |lot: &str| list.lots.iter().position(|l| l.lot == lot).unwrap_or(usize::MAX);
    plan.unscheduled.sort_by_key(|u| order(&u.lot));

    let mut notes = vec![format!(
        "Sample counts use each part's severity before the shift; a lot rejected earlier in the shift can \
         tighten a later lot of the same part, and the shift run then asks for the tightened count."
    )];
    if record.is_none() {
        notes.push(
            "The plant keeps no switching record, so every part is planned on normal inspection.".into(),
        );
    }
    Ok(PlannedShift {
        shift,
        plant: plant.name().to_string(),
        lot_list: lot_list.display().to_string(),
        generated_at: crate::shift::utc_stamp(),
        dispatch_rule: rule
            .as_ref()
            .map(|r| RuleUsed { name: r.name().into(), expression: r.expression().into() }),
        rule_errors,
        plan,
        lots,
        notes,
        rigs: config.rigs.clone(),
    })
}

/// The files a plan run wrote.
#[derive(Debug, Clone, PartialEq)]
pub struct PlanOutputs {
    /// `plan.json`.
    pub json: PathBuf,
    /// `plan.html`.
    pub html: PathBuf,
    /// One work list per rig that has work, in the plant config's rig order.
    pub worklists: Vec<PathBuf>,
}

/// The work list's file name for a rig.
pub fn worklist_name(rig: &str) -> String {
    format!("worklist-{}.csv", lot_file_name(rig))
}

/// Writes `plan.json`, the operators' work lists and `plan.html` into `out_dir`; work
/// lists left from an earlier plan in that folder are removed first, so every list there
/// belongs to this plan.
pub fn write_plan(
    plant: &OpenPlant,
    planned: &PlannedShift,
    out_dir: &Path,
) -> Result<PlanOutputs, PlanRunError> {
    let renderer = plant.renderer()?;
    let json = serde_json::to_string_pretty(planned).map_err(|e| SinkError::Other(e.to_string()))?;
    let json_path = out_dir.join(PLAN_FILE);
    write_atomic(&json_path, json.as_bytes())?;
    if let Ok(entries) = std::fs::read_dir(out_dir) {
        for entry in entries.flatten() {
            let name = entry.file_name().to_string_lossy().to_string();
            if name.starts_with("worklist-") && name.ends_with(".csv") {
                std::fs::remove_file(entry.path())
                    .map_err(|source| SinkError::Write { path: entry.path(), source })?;
            }
        }
    }
    let mut worklists = Vec::new();
    for check in &planned.plan.checks {
        let context = report::WorklistCsv {
            rig: check.rig.clone(),
            shift: planned.shift.clone(),
            generated_at: planned.generated_at.clone(),
            cautions: report::plan_cautions(),
            steps: work_steps(planned, &check.rig),
        };
        let text = renderer
            .render("worklist.csv.j2", &context)
            .map_err(|source| PlanRunError::Render { what: "worklist.csv.j2".into(), source })?;
        let path = out_dir.join(worklist_name(&check.rig));
        write_atomic(&path, text.as_bytes())?;
        worklists.push(path);
    }
    let horizon_s = planned.plan.shift_end.seconds_since(planned.plan.shift_start) as f64;
    let clock = planned.plan.shift_start.time();
    let clock_s =
        f64::from(clock.hour()) * 3600.0 + f64::from(clock.minute()) * 60.0 + f64::from(clock.second());
    let gantt =
        report::gantt_svg(&gantt_rows(planned), horizon_s, clock_s, &format!("shift {}", planned.shift))
            .map_err(|source| PlanRunError::Render { what: "the Gantt chart".into(), source })?;
    let context = report::PlanReport {
        generated_at: planned.generated_at.clone(),
        plant: planned.plant.clone(),
        plan: planned,
        gantt_svg: gantt,
        worklists: worklists
            .iter()
            .filter_map(|p| p.file_name().map(|n| n.to_string_lossy().to_string()))
            .collect(),
        cautions: report::plan_cautions(),
    };
    let html = renderer
        .render("plan.html.j2", &context)
        .map_err(|source| PlanRunError::Render { what: "plan.html.j2".into(), source })?;
    let html_path = out_dir.join(PLAN_HTML);
    write_atomic(&html_path, html.as_bytes())?;
    Ok(PlanOutputs { json: json_path, html: html_path, worklists })
}

/// A number for people: at most two decimals, no trailing zeros.
fn number(value: f64) -> String {
    let text = format!("{value:.2}");
    text.trim_end_matches('0').trim_end_matches('.').to_string()
}

/// One rig's steps in order: its reference check, then each lot with its setup.
fn work_steps(planned: &PlannedShift, rig: &str) -> Vec<report::WorkStep> {
    let mut steps = Vec::new();
    let mut push = |mut step: report::WorkStep| {
        step.step = steps.len() as u32 + 1;
        steps.push(step);
    };
    let reference = planned.rigs.iter().find(|r| r.name == rig).and_then(|r| r.reference.as_ref());
    for check in planned.plan.checks.iter().filter(|c| c.rig == rig) {
        let instruction = match reference {
            Some(spring) => {
                let band = spring.certified_torque_nmm * spring.allowed_deviation_pct / 100.0;
                format!(
                    "verify the rig with reference spring {}: drive to {}° and read the torque; it must be {} N·mm \
                     ± {} % ({}–{} N·mm). Test no lot until it passes.",
                    spring.serial,
                    number(spring.check_angle_deg),
                    number(spring.certified_torque_nmm),
                    number(spring.allowed_deviation_pct),
                    number(spring.certified_torque_nmm - band),
                    number(spring.certified_torque_nmm + band)
                )
            }
            None => "verify the rig with its reference spring; test no lot until it passes".to_string(),
        };
        push(report::WorkStep {
            step: 0,
            kind: "reference-check".into(),
            start: check.start.to_string(),
            end: check.end.to_string(),
            lot: String::new(),
            part: check.reference.clone(),
            samples: 1,
            arbor_mm: None,
            fixture: String::new(),
            ship_by: None,
            instruction,
        });
    }
    let mut assignments: Vec<_> = planned.plan.assignments.iter().filter(|a| a.rig == rig).collect();
    assignments.sort_by_key(|a| a.start_s);
    for a in assignments {
        if a.setup_s > 0 {
            push(report::WorkStep {
                step: 0,
                kind: "setup".into(),
                start: a.start.to_string(),
                end: a.test_start.to_string(),
                lot: a.lot.clone(),
                part: a.part.clone(),
                samples: 0,
                arbor_mm: Some(a.arbor_mm),
                fixture: a.fixture.clone(),
                ship_by: a.due.map(|d| d.to_string()),
                instruction: format!("fit fixture {} and the {} mm arbor", a.fixture, number(a.arbor_mm)),
            });
        }
        let late = if a.tardiness_s > 0 {
            format!("; planned to end {} min after its ship time", (a.tardiness_s + 59) / 60)
        } else {
            String::new()
        };
        push(report::WorkStep {
            step: 0,
            kind: "test".into(),
            start: a.test_start.to_string(),
            end: a.end.to_string(),
            lot: a.lot.clone(),
            part: a.part.clone(),
            samples: u64::from(a.samples),
            arbor_mm: Some(a.arbor_mm),
            fixture: a.fixture.clone(),
            ship_by: a.due.map(|d| d.to_string()),
            instruction: format!(
                "test {} parts of lot {} (part {}) on the {} mm arbor{late}",
                a.samples,
                a.lot,
                a.part,
                number(a.arbor_mm)
            ),
        });
    }
    steps
}

/// The Gantt chart's rows: per rig, the time it may not be used, its check, setups and lots.
fn gantt_rows(planned: &PlannedShift) -> Vec<report::GanttRow> {
    let plan = &planned.plan;
    let start = plan.shift_start;
    let horizon = plan.shift_end.seconds_since(start) as f64;
    let clock = |s: f64| start.checked_add_seconds(s as i64).map(|t| t.to_string()[11..16].to_string());
    let mut rows = Vec::new();
    for rig in &planned.rigs {
        let mut bars = Vec::new();
        let unavailable = |from: f64, to: f64, label: String| report::GanttBar {
            start_s: from,
            end_s: to,
            label,
            kind: report::BarKind::Unavailable,
        };
        if !plan.checks.iter().any(|c| c.rig == rig.name) {
            let why = plan
                .refusals
                .iter()
                .find(|r| r.rig == rig.name)
                .map(|r| r.reason.kind())
                .unwrap_or("no work");
            bars.push(unavailable(0.0, horizon, format!("not usable: {why}")));
        } else {
            let (from, to) = match &rig.available {
                Some(available) => available.window(start),
                None => (start, plan.shift_end),
            };
            let free_start = (from.seconds_since(start) as f64).clamp(0.0, horizon);
            let free_end = (to.seconds_since(start) as f64).clamp(0.0, horizon);
            if free_start > 0.0 {
                bars.push(unavailable(0.0, free_start, "not free".into()));
            }
            let calibration = rig.calibration_due.map(|due| due.seconds_since(start) as f64);
            match calibration {
                Some(cal) if cal < free_end => bars.push(unavailable(
                    cal.max(0.0),
                    horizon,
                    format!("calibration lapses {}", clock(cal).unwrap_or_default()),
                )),
                _ if free_end < horizon => bars.push(unavailable(free_end, horizon, "not free".into())),
                _ => {}
            }
        }
        for check in plan.checks.iter().filter(|c| c.rig == rig.name) {
            bars.push(report::GanttBar {
                start_s: check.start_s as f64,
                end_s: check.end_s as f64,
                label: "ref".into(),
                kind: report::BarKind::Check,
            });
        }
        for a in plan.assignments.iter().filter(|a| a.rig == rig.name) {
            if a.setup_s > 0 {
                bars.push(report::GanttBar {
                    start_s: a.start_s as f64,
                    end_s: (a.start_s + a.setup_s) as f64,
                    label: "setup".into(),
                    kind: report::BarKind::Setup,
                });
            }
            bars.push(report::GanttBar {
                start_s: (a.start_s + a.setup_s) as f64,
                end_s: a.end_s as f64,
                label: a.lot.clone(),
                kind: if a.tardiness_s > 0 { report::BarKind::Late } else { report::BarKind::Test },
            });
        }
        rows.push(report::GanttRow { label: rig.name.clone(), bars });
    }
    rows
}

#[cfg(test)]
mod tests {
    use super::*;

    fn spec(text_extra: &str) -> PartSpec {
        let text = format!(
            "part: P-1\nrevision: A\ncustomer: invented\nmaterial: {{ name: wire, modulus_n_per_mm2: 206000 }}\n\
             geometry: {{ wire_diameter_mm: 2.0, mean_diameter_mm: 16.0, body_coils: 8, leg_lengths_mm: [30, 30], wind: right }}\n\
             test: {{ max_angle_deg: 60 }}\n\
             characteristics:\n  rate_nmm_per_deg: {{ nominal: 7.0, tolerance: \"±6%\", class: major }}\n{text_extra}"
        );
        PartSpec::from_yaml("p.yaml", &text).unwrap()
    }

    #[test]
    fn the_largest_torque_is_the_larger_of_the_torque_limits_and_rate_times_deflection() {
        // By hand: rate upper limit 7.0 × 1.06 = 7.42 N·mm/°; 10° preload (free angle −10°)
        // makes the deflection at 60° 70°, so 7.42 × 70 = 519.4 N·mm, above 420 + 6 % = 445.2.
        let preloaded = spec(
            "  torque_at:\n    - { angle_deg: 50, nominal_nmm: 420, tolerance: \"±6%\", class: critical }\n  \
             free_angle_deg: { nominal: -10, tolerance: 3, class: minor }\n",
        );
        let (torque, basis) = largest_test_torque(&preloaded).unwrap();
        assert!((torque - 519.4).abs() < 1e-9, "{torque}");
        assert!(basis.starts_with("rate upper limit"), "{basis}");
        assert_eq!(test_deflection_deg(&preloaded), 70.0);
        // A torque limit above the rate's reach decides instead (by hand: 900 × 1.1 = 990).
        let high = spec(
            "  torque_at:\n    - { angle_deg: 50, nominal_nmm: 900, tolerance: \"±10%\", class: critical }\n",
        );
        let (torque, basis) = largest_test_torque(&high).unwrap();
        assert!((torque - 990.0).abs() < 1e-9, "{torque}");
        assert!(basis.contains("torque at 50°"), "{basis}");
    }

    #[test]
    fn work_list_names_are_safe_file_names() {
        assert_eq!(worklist_name("RIG-A"), "worklist-RIG-A.csv");
        assert_eq!(worklist_name("bay 3/rig a"), "worklist-bay_3_rig_a.csv");
    }
}
