//! `dispatch-rule` plugins: a plant's own priority for the planner, written as a
//! minijinja expression over the lot a free rig could take next.
//!
//! The expression sees the fields of [`twistlot_schedule::JobView`] as plain variables:
//! `lot`, `part`, `samples`, `weight`, `coiler`, `rig`, `now_s`, `ready_s`, `due_s`,
//! `processing_s`, `setup_s`, `slack_s`, `max_torque_nmm`, `max_angle_deg` and `atcs`
//! (times in seconds from the shift's start; `due_s` and `slack_s` are none for a lot
//! without a ship time). It must give a number; higher goes first. Undefined names are
//! errors, as in check plugins, so a misspelt field never quietly ranks every lot alike.
//!
//! The same machinery as the check plugins' (`twistlot-stats`), mirrored here in a few
//! lines rather than shared, because a check judges a part and a rule ranks a lot: they
//! see different variables and give different kinds of value.

use minijinja::value::{Value, ValueKind};
use minijinja::{Environment, Expression, UndefinedBehavior};
use std::cell::RefCell;
use twistlot_model::plugin::DispatchRuleManifest;
use twistlot_schedule::JobView;

/// Distinct evaluation errors kept for the report; more would only repeat them.
const MAX_ERRORS: usize = 5;

/// A dispatch rule whose expression does not compile.
#[derive(Debug, Clone, PartialEq, Eq, thiserror::Error)]
#[error("dispatch rule `{name}`: the expression `{expression}` does not compile: {detail}")]
pub struct DispatchError {
    /// Plugin name.
    pub name: String,
    /// The expression as written.
    pub expression: String,
    /// What the expression engine said.
    pub detail: String,
}

fn environment() -> Environment<'static> {
    let mut env = Environment::new();
    env.set_undefined_behavior(UndefinedBehavior::Strict);
    env
}

/// Checks that an expression compiles; the error text is the engine's.
pub fn check_expression(expression: &str) -> Result<(), String> {
    environment().compile_expression(expression).map(|_| ()).map_err(|e| e.to_string())
}

/// A `dispatch-rule` plugin ready to compile for one planning run.
#[derive(Debug)]
pub struct DispatchRule {
    manifest: DispatchRuleManifest,
    env: Environment<'static>,
}

impl DispatchRule {
    /// The rule of `manifest`; refused when its expression does not compile.
    pub fn new(manifest: &DispatchRuleManifest) -> Result<DispatchRule, DispatchError> {
        check_expression(&manifest.expression).map_err(|detail| DispatchError {
            name: manifest.name.clone(),
            expression: manifest.expression.clone(),
            detail,
        })?;
        Ok(DispatchRule { manifest: manifest.clone(), env: environment() })
    }

    /// The plugin's name.
    pub fn name(&self) -> &str {
        &self.manifest.name
    }

    /// The expression as written.
    pub fn expression(&self) -> &str {
        &self.manifest.expression
    }

    /// The compiled expression, borrowed from this rule for one planning run.
    pub fn compiled(&self) -> Result<CompiledRule<'_>, DispatchError> {
        let expression =
            self.env.compile_expression(&self.manifest.expression).map_err(|e| DispatchError {
                name: self.manifest.name.clone(),
                expression: self.manifest.expression.clone(),
                detail: e.to_string(),
            })?;
        Ok(CompiledRule { name: &self.manifest.name, expression, errors: RefCell::new(Vec::new()) })
    }
}

/// A compiled rule: a priority per lot, and the errors met while ranking.
pub struct CompiledRule<'a> {
    name: &'a str,
    expression: Expression<'a, 'a>,
    errors: RefCell<Vec<String>>,
}

impl CompiledRule<'_> {
    /// The priority of a lot (higher goes first). An expression that fails or gives no
    /// number ranks the lot lowest (NaN, as the planner expects) and the error is kept.
    pub fn priority(&self, view: &JobView<'_>) -> f64 {
        let context = Value::from_serialize(view);
        let failure = match self.expression.eval(context) {
            Ok(value) if value.kind() == ValueKind::Number => match f64::try_from(value) {
                Ok(number) if number.is_finite() => return number,
                _ => "is not a finite number".to_string(),
            },
            Ok(value) => format!("gave `{value}`, not a number"),
            Err(err) => format!("failed: {err}"),
        };
        let text = format!("dispatch rule `{}` on lot {} {failure}", self.name, view.lot);
        let mut errors = self.errors.borrow_mut();
        if errors.len() < MAX_ERRORS && !errors.contains(&text) {
            errors.push(text);
        }
        f64::NAN
    }

    /// The errors met so far (at most a few, each once).
    pub fn errors(&self) -> Vec<String> {
        self.errors.borrow().clone()
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use twistlot_model::PluginKind;

    fn manifest(expression: &str) -> DispatchRuleManifest {
        DispatchRuleManifest {
            name: "test-rule".into(),
            kind: PluginKind::DispatchRule,
            api: 1,
            description: "a rule for tests".into(),
            expression: expression.into(),
        }
    }

    fn view<'a>(lot: &'a str, weight: f64, due_s: Option<i64>) -> JobView<'a> {
        JobView {
            lot,
            part: "P",
            samples: 20,
            weight,
            coiler: Some("C-04"),
            rig: "RIG-A",
            now_s: 100,
            ready_s: 0,
            due_s,
            processing_s: 600,
            setup_s: 0,
            slack_s: due_s.map(|d| d - 600 - 100),
            max_torque_nmm: 1000.0,
            max_angle_deg: 90.0,
            atcs: 0.5,
        }
    }

    #[test]
    fn the_expression_ranks_by_the_lots_fields() {
        let rule = DispatchRule::new(&manifest("weight * 1000 - processing_s")).unwrap();
        let compiled = rule.compiled().unwrap();
        // Common practice, no published source: 2 × 1000 − 600 by hand.
        assert_eq!(compiled.priority(&view("L1", 2.0, None)), 1400.0);
        let by_coiler = DispatchRule::new(&manifest("1 if coiler == 'C-04' else 0")).unwrap();
        assert_eq!(by_coiler.compiled().unwrap().priority(&view("L1", 1.0, None)), 1.0);
        assert!(compiled.errors().is_empty());
    }

    #[test]
    fn failures_rank_lowest_and_are_reported_once() {
        let rule = DispatchRule::new(&manifest("-slack_s")).unwrap();
        let compiled = rule.compiled().unwrap();
        assert_eq!(compiled.priority(&view("L1", 1.0, Some(5000))), -4300.0);
        // No ship time: slack is none, and `-none` is an error, not a quiet zero.
        assert!(compiled.priority(&view("L2", 1.0, None)).is_nan());
        assert!(compiled.priority(&view("L2", 1.0, None)).is_nan());
        let errors = compiled.errors();
        assert_eq!(errors.len(), 1, "{errors:?}");
        assert!(errors[0].contains("lot L2"), "{errors:?}");
        let text_rule = DispatchRule::new(&manifest("lot")).unwrap();
        let text = text_rule.compiled().unwrap();
        assert!(text.priority(&view("L3", 1.0, None)).is_nan());
        assert!(text.errors()[0].contains("not a number"), "{:?}", text.errors());
        let misspelt_rule = DispatchRule::new(&manifest("wieght")).unwrap();
        let misspelt = misspelt_rule.compiled().unwrap();
        assert!(misspelt.priority(&view("L4", 1.0, None)).is_nan());
    }

    #[test]
    fn an_expression_that_does_not_compile_is_refused_with_its_name() {
        let err = DispatchRule::new(&manifest("weight *")).unwrap_err();
        assert!(err.to_string().starts_with("dispatch rule `test-rule`: the expression `weight *`"), "{err}");
    }
}
