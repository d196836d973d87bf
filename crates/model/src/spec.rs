//! Part specs: what the customer's drawing asks of a torsion spring, and how it is tested.

use crate::yaml::{parse_document, DocumentError};
use serde::{Deserialize, Serialize};
use std::collections::BTreeMap;
use std::fmt;
use std::str::FromStr;

/// How much a nonconformity of a characteristic matters.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash, Serialize, Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum CharacteristicClass {
    /// Failure may hurt someone or stop the customer's product working.
    Critical,
    /// Failure is likely to reduce the usability of the product.
    Major,
    /// Failure is unlikely to reduce usability.
    Minor,
}

impl CharacteristicClass {
    /// All classes, most serious first.
    pub const ALL: [CharacteristicClass; 3] = [Self::Critical, Self::Major, Self::Minor];

    /// The lower-case label.
    pub fn as_str(self) -> &'static str {
        match self {
            Self::Critical => "critical",
            Self::Major => "major",
            Self::Minor => "minor",
        }
    }
}

impl fmt::Display for CharacteristicClass {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.as_str())
    }
}

/// The outcome of judging one characteristic or one test.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash, Serialize, Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum Verdict {
    /// Inside the limits.
    Pass,
    /// Outside the limits.
    Fail,
    /// The curve does not support a verdict (reason given beside it).
    Invalid,
}

impl Verdict {
    /// The lower-case label.
    pub fn as_str(self) -> &'static str {
        match self {
            Verdict::Pass => "pass",
            Verdict::Fail => "fail",
            Verdict::Invalid => "invalid",
        }
    }

    /// Combines characteristic verdicts into a test verdict: any fail fails the
    /// test; otherwise any invalid makes it invalid.
    pub fn combine(verdicts: impl IntoIterator<Item = Verdict>) -> Verdict {
        let mut result = Verdict::Pass;
        for verdict in verdicts {
            match verdict {
                Verdict::Fail => return Verdict::Fail,
                Verdict::Invalid => result = Verdict::Invalid,
                Verdict::Pass => {}
            }
        }
        result
    }
}

impl fmt::Display for Verdict {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.as_str())
    }
}

/// One characteristic judged on one test.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Finding {
    /// Characteristic name, e.g. `rate`, `torque@45`, `free_angle`, or a check plugin's name.
    pub characteristic: String,
    /// Class of the characteristic.
    pub class: CharacteristicClass,
    /// Measured value (absent when it could not be measured).
    pub value: Option<f64>,
    /// Lower limit, when there is one.
    pub lower: Option<f64>,
    /// Upper limit, when there is one.
    pub upper: Option<f64>,
    /// Verdict on this characteristic.
    pub verdict: Verdict,
    /// Why, in words.
    pub message: String,
}

/// A tolerance around a nominal value.
///
/// Written in a spec as a YAML number (`0.5`: symmetric, absolute, in the characteristic's
/// own unit), a map `{plus: 5, minus: 3, percent: false}`, or a string that says what
/// its numbers are: a percentage of the nominal (`"±8%"`, `"+4%/-2%"`) or an amount in
/// the characteristic's unit (`"±0.5 N·mm/°"`, `"+20/-15 N·mm"`, `"±4°"`). A string
/// with a bare number (`"10"`, `"±10"`) is refused: a quoted number is most often a
/// percentage whose `%` was lost, and taking it as an absolute amount would widen or
/// narrow the drawing's limits without a word.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(try_from = "ToleranceText")]
pub struct Tolerance {
    /// Allowed excess above nominal (non-negative).
    pub plus: f64,
    /// Allowed shortfall below nominal (non-negative).
    pub minus: f64,
    /// Whether `plus` and `minus` are percentages of the nominal.
    pub percent: bool,
    /// The unit a string tolerance was written with, checked against its characteristic
    /// when the spec is validated; `None` for numbers, maps and percentages.
    #[serde(skip)]
    pub unit: Option<ToleranceUnit>,
}

/// The units a tolerance string may name; each characteristic accepts only its own.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ToleranceUnit {
    /// N·mm/° (spring and secant rates).
    NmmPerDeg,
    /// N·mm (torques).
    Nmm,
    /// Degrees (angles).
    Deg,
}

impl ToleranceUnit {
    /// The unit as the reports write it.
    pub fn symbol(self) -> &'static str {
        match self {
            ToleranceUnit::NmmPerDeg => "N·mm/°",
            ToleranceUnit::Nmm => "N·mm",
            ToleranceUnit::Deg => "°",
        }
    }

    /// Reads a unit written after a tolerance's numbers (`N·mm/°`, `Nmm/deg`, `N.mm`, `°`, `deg`…).
    fn parse(text: &str) -> Option<ToleranceUnit> {
        let folded: String = text
            .chars()
            .filter(|c| !matches!(c, '·' | '.' | '*' | ' ' | '⋅'))
            .collect::<String>()
            .to_ascii_lowercase()
            .replace('°', "deg");
        match folded.as_str() {
            "nmm/deg" => Some(ToleranceUnit::NmmPerDeg),
            "nmm" => Some(ToleranceUnit::Nmm),
            "deg" => Some(ToleranceUnit::Deg),
            _ => None,
        }
    }
}

impl Tolerance {
    /// A tolerance of `plus` and `minus` (percent of the nominal when `percent`), with no unit written.
    pub fn new(plus: f64, minus: f64, percent: bool) -> Tolerance {
        Tolerance { plus, minus, percent, unit: None }
    }

    /// The limits this tolerance sets around `nominal`.
    pub fn limits(&self, nominal: f64) -> Limits {
        let scale = if self.percent { nominal.abs() / 100.0 } else { 1.0 };
        Limits { lower: Some(nominal - self.minus * scale), upper: Some(nominal + self.plus * scale) }
    }

    /// Refuses a unit written for another kind of characteristic (`±4°` on a torque).
    fn check_unit(&self, expected: ToleranceUnit) -> Result<(), String> {
        match self.unit {
            Some(unit) if unit != expected => Err(format!(
                "the tolerance is written in {} but this characteristic is in {}: write the amount in {} \
                 (e.g. `±{} {}`) or as a percentage of the nominal (e.g. `±8%`)",
                unit.symbol(),
                expected.symbol(),
                expected.symbol(),
                self.plus,
                expected.symbol()
            )),
            _ => Ok(()),
        }
    }
}

#[derive(Deserialize)]
#[serde(untagged)]
enum ToleranceText {
    Number(f64),
    Text(String),
    Map {
        plus: f64,
        minus: f64,
        #[serde(default)]
        percent: bool,
    },
}

impl TryFrom<ToleranceText> for Tolerance {
    type Error = String;
    fn try_from(raw: ToleranceText) -> Result<Self, String> {
        let tolerance = match raw {
            ToleranceText::Number(value) => Tolerance::new(value, value, false),
            ToleranceText::Text(text) => text.parse()?,
            ToleranceText::Map { plus, minus, percent } => Tolerance::new(plus, minus, percent),
        };
        if !(tolerance.plus.is_finite() && tolerance.minus.is_finite())
            || tolerance.plus < 0.0
            || tolerance.minus < 0.0
        {
            return Err("a tolerance's plus and minus must be finite and not negative".to_string());
        }
        Ok(tolerance)
    }
}

impl FromStr for Tolerance {
    type Err = String;

    fn from_str(text: &str) -> Result<Self, String> {
        let bad = || {
            format!(
                "`{text}` is not a tolerance (write e.g. `±8%`, `+4%/-2%`, `±0.5 N·mm/°`, `+20/-15 N·mm`, \
                 or an unquoted number for an amount in the characteristic's unit)"
            )
        };
        let compact: String = text.chars().filter(|c| !c.is_whitespace()).collect();
        // The unit, if any, follows the last digit or `%`.
        let numbers_end = compact.rfind(|c: char| c.is_ascii_digit() || c == '%').map_or(0, |i| i + 1);
        let (numbers, unit_text) = compact.split_at(numbers_end);
        let unit = match unit_text {
            "" => None,
            other => Some(ToleranceUnit::parse(other).ok_or_else(|| {
                format!(
                    "`{text}`: `{other}` is not a unit a tolerance can be written in (use N·mm/° for rates, \
                     N·mm for torques, ° for angles, or % of the nominal)"
                )
            })?),
        };
        let number = |part: &str| -> Result<(f64, bool), String> {
            let (digits, percent) = match part.strip_suffix('%') {
                Some(digits) => (digits, true),
                None => (part, false),
            };
            digits.parse::<f64>().map(|v| (v, percent)).map_err(|_| bad())
        };
        let symmetric = numbers
            .strip_prefix('±')
            .or_else(|| numbers.strip_prefix("+/-"))
            .or_else(|| numbers.strip_prefix("+-"));
        let tolerance = if let Some(rest) = symmetric {
            let (value, percent) = number(rest)?;
            Tolerance::new(value, value, percent)
        } else if let Some((plus, minus)) = numbers.split_once('/') {
            let plus = plus.strip_prefix('+').ok_or_else(bad)?;
            let minus = minus.strip_prefix('-').ok_or_else(bad)?;
            let (plus, plus_pct) = number(plus)?;
            let (minus, minus_pct) = number(minus)?;
            if plus_pct != minus_pct {
                return Err(format!("`{text}` mixes a percentage with an absolute value"));
            }
            Tolerance::new(plus, minus, plus_pct)
        } else {
            let (value, percent) = number(numbers)?;
            Tolerance::new(value, value, percent)
        };
        match (tolerance.percent, unit) {
            (true, Some(unit)) => Err(format!(
                "`{text}` gives both a percentage and a unit ({}); write one of them",
                unit.symbol()
            )),
            (false, None) => Err(format!(
                "`{text}` has no unit and no `%`: a number in quotes is ambiguous (it is often a percentage \
                 whose `%` was lost). Write `±{0}%` for a percentage of the nominal, the amount with the \
                 characteristic's unit (e.g. `±{0} N·mm/°` for a rate, `±{0} N·mm` for a torque, `±{0}°` for \
                 an angle), or an unquoted number `{0}` for an amount in the characteristic's unit",
                tolerance.plus
            )),
            _ => Ok(Tolerance { unit, ..tolerance }),
        }
    }
}

/// Lower and upper limits; either may be absent for a one-sided limit.
#[derive(Debug, Clone, Copy, PartialEq, Default, Serialize, Deserialize)]
pub struct Limits {
    /// Lowest acceptable value.
    pub lower: Option<f64>,
    /// Highest acceptable value.
    pub upper: Option<f64>,
}

impl Limits {
    /// True when `value` is inside the limits (limits included).
    pub fn contains(&self, value: f64) -> bool {
        self.lower.is_none_or(|lo| value >= lo) && self.upper.is_none_or(|hi| value <= hi)
    }
}

/// A characteristic with a nominal and a tolerance.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Toleranced {
    /// Nominal value from the drawing.
    pub nominal: f64,
    /// Tolerance around the nominal.
    pub tolerance: Tolerance,
    /// Class of the characteristic.
    pub class: CharacteristicClass,
}

impl Toleranced {
    /// The limits this characteristic sets.
    pub fn limits(&self) -> Limits {
        self.tolerance.limits(self.nominal)
    }
}

/// Torque required at one leg angle.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct TorqueAtAngle {
    /// Leg angle in degrees, measured on the rig's angle scale.
    pub angle_deg: f64,
    /// Nominal torque, N·mm.
    pub nominal_nmm: f64,
    /// Tolerance on the torque.
    pub tolerance: Tolerance,
    /// Class of the characteristic.
    pub class: CharacteristicClass,
}

impl TorqueAtAngle {
    /// The torque limits, N·mm.
    pub fn limits(&self) -> Limits {
        self.tolerance.limits(self.nominal_nmm)
    }
}

/// Upper limit on hysteresis.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct HysteresisLimit {
    /// Angles (degrees) at which load−unload torque is taken, as % of the loading torque.
    pub at_angles_deg: Vec<f64>,
    /// Largest acceptable hysteresis at those angles, %.
    pub max_pct: f64,
    /// Largest acceptable energy loss ratio (area between strokes / loading area), %.
    #[serde(default)]
    pub max_energy_loss_pct: Option<f64>,
    /// Class of the characteristic.
    pub class: CharacteristicClass,
}

/// Upper limit on non-linearity.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct LinearityLimit {
    /// Largest acceptable residual from the fitted line in the window, % of maximum torque.
    pub max_pct: f64,
    /// Class of the characteristic.
    pub class: CharacteristicClass,
}

/// Secant rate between two leg angles.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct SecantRate {
    /// First angle, degrees.
    pub from_deg: f64,
    /// Second angle, degrees.
    pub to_deg: f64,
    /// Nominal secant rate, N·mm/°.
    pub nominal_nmm_per_deg: f64,
    /// Tolerance on it.
    pub tolerance: Tolerance,
    /// Class of the characteristic.
    pub class: CharacteristicClass,
}

/// Upper limit on how much a free swing's period depends on its amplitude.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct AmplitudeDependenceLimit {
    /// Largest acceptable |period at large amplitude / period at small amplitude − 1|, %.
    pub max_pct: f64,
    /// Class of the characteristic.
    pub class: CharacteristicClass,
}

/// What the drawing asks of the part in a free-swing (dynamic) test: the spring swings a
/// known inertia after release, and the record of angle over time is analysed.
#[derive(Debug, Clone, PartialEq, Default, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct DynamicCharacteristics {
    /// Dynamic rate κ·π/180 from the swing (κ = I·ω0²), N·mm/°; finding `dynamic_rate`.
    #[serde(default)]
    pub rate_nmm_per_deg: Option<Toleranced>,
    /// Undamped natural frequency ω0/2π of the spring with the test inertia, Hz; finding `frequency`.
    #[serde(default)]
    pub frequency_hz: Option<Toleranced>,
    /// Limit on the period's amplitude dependence; finding `amplitude_dependence`.
    #[serde(default)]
    pub amplitude_dependence: Option<AmplitudeDependenceLimit>,
}

impl DynamicCharacteristics {
    /// True when no dynamic characteristic is named.
    pub fn is_empty(&self) -> bool {
        self.rate_nmm_per_deg.is_none() && self.frequency_hz.is_none() && self.amplitude_dependence.is_none()
    }
}

/// Everything the drawing specifies for the part's behaviour on the rig.
#[derive(Debug, Clone, PartialEq, Default, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Characteristics {
    /// Spring rate, N·mm/° (least squares in the window).
    #[serde(default)]
    pub rate_nmm_per_deg: Option<Toleranced>,
    /// Secant rate between two angles.
    #[serde(default)]
    pub secant_rate: Option<SecantRate>,
    /// Torque at specified angles.
    #[serde(default)]
    pub torque_at: Vec<TorqueAtAngle>,
    /// Free (zero-torque) leg angle, degrees.
    #[serde(default)]
    pub free_angle_deg: Option<Toleranced>,
    /// Hysteresis limit.
    #[serde(default)]
    pub hysteresis: Option<HysteresisLimit>,
    /// Linearity limit.
    #[serde(default)]
    pub linearity: Option<LinearityLimit>,
    /// Characteristics judged on free-swing (free-decay) tests.
    #[serde(default)]
    pub dynamic: Option<DynamicCharacteristics>,
}

/// Spring material.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Material {
    /// Material designation.
    pub name: String,
    /// Young's modulus E, N/mm².
    pub modulus_n_per_mm2: f64,
}

/// Direction the coils wind.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum WindDirection {
    /// Right-hand wind.
    Right,
    /// Left-hand wind.
    Left,
}

/// Spring geometry from the drawing.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Geometry {
    /// Wire diameter d, mm.
    pub wire_diameter_mm: f64,
    /// Mean coil diameter D, mm (give this or the outside diameter).
    #[serde(default)]
    pub mean_diameter_mm: Option<f64>,
    /// Outside coil diameter, mm.
    #[serde(default)]
    pub outside_diameter_mm: Option<f64>,
    /// Number of body coils.
    pub body_coils: f64,
    /// Lengths of the two legs, mm.
    pub leg_lengths_mm: [f64; 2],
    /// Wind direction.
    pub wind: WindDirection,
}

impl Geometry {
    /// Mean coil diameter, from the outside diameter when only that is given.
    pub fn mean_diameter(&self) -> Option<f64> {
        self.mean_diameter_mm.or_else(|| self.outside_diameter_mm.map(|od| od - self.wire_diameter_mm))
    }
}

/// How the part is tested.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct TestSetup {
    /// Largest leg angle the rig drives to, degrees.
    pub max_angle_deg: f64,
    /// Load–unload cycles run before the evaluated cycle.
    #[serde(default)]
    pub pre_cycles: u32,
    /// Evaluation window as fractions of the tested deflection, `[lo, hi]`.
    #[serde(default = "default_window")]
    pub window: [f64; 2],
    /// Arbor diameter, mm.
    #[serde(default)]
    pub arbor_diameter_mm: Option<f64>,
    /// The whole inertia the spring swings in a free-swing test (fixture and added mass),
    /// kg·m², used when an export does not state its own `inertia_kgm2`.
    #[serde(default)]
    pub inertia_kgm2: Option<f64>,
}

fn default_window() -> [f64; 2] {
    [0.2, 0.8]
}

/// Which plan a characteristic class is sampled under.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(tag = "plan", rename_all = "kebab-case", deny_unknown_fields)]
pub enum ClassPlan {
    /// Attribute plan from the scheme's tables at this AQL (percent defective).
    Attribute {
        /// Acceptable quality limit, percent defective.
        aql_pct: f64,
    },
    /// Sample the code letter's normal sample size and accept only on zero defectives (Ac 0, Re 1).
    ZeroAcceptance,
    /// Not sampled for this class.
    None,
}

/// A variables plan on a measured characteristic.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct VariablesPlanSpec {
    /// Which measured characteristic (`rate` is the usual one).
    pub characteristic: String,
    /// Acceptable quality level, percent defective.
    pub aql_pct: f64,
    /// Lot tolerance percent defective.
    pub ltpd_pct: f64,
    /// Producer's risk at the AQL.
    #[serde(default = "default_alpha")]
    pub alpha: f64,
    /// Consumer's risk at the LTPD.
    #[serde(default = "default_beta")]
    pub beta: f64,
    /// Process standard deviation when known (same unit as the characteristic); absent means unknown.
    #[serde(default)]
    pub sigma: Option<f64>,
}

fn default_alpha() -> f64 {
    0.05
}

fn default_beta() -> f64 {
    0.10
}

/// The sampling agreement for a part.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct SamplingSpec {
    /// Name of the sampling-scheme plugin.
    #[serde(default = "default_scheme")]
    pub scheme: String,
    /// Inspection level (I, II, III, S-1 … S-4).
    #[serde(default = "default_level")]
    pub level: String,
    /// Plan for critical characteristics.
    #[serde(default = "zero_acceptance")]
    pub critical: ClassPlan,
    /// Plan for major characteristics.
    pub major: ClassPlan,
    /// Plan for minor characteristics.
    pub minor: ClassPlan,
    /// Optional variables plan on a measured characteristic.
    #[serde(default)]
    pub variables: Option<VariablesPlanSpec>,
}

fn default_scheme() -> String {
    "mil-std-105e".to_string()
}

fn default_level() -> String {
    "II".to_string()
}

fn zero_acceptance() -> ClassPlan {
    ClassPlan::ZeroAcceptance
}

/// A part spec: one drawing revision, as loaded from the plant's `parts/` folder.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct PartSpec {
    /// Part (drawing) number.
    pub part: String,
    /// Drawing revision.
    pub revision: String,
    /// Customer.
    pub customer: String,
    /// Free description.
    #[serde(default)]
    pub description: String,
    /// Material.
    pub material: Material,
    /// Geometry.
    pub geometry: Geometry,
    /// Test setup.
    pub test: TestSetup,
    /// Characteristics with tolerances.
    pub characteristics: Characteristics,
    /// Sampling agreement.
    #[serde(default)]
    pub sampling: Option<SamplingSpec>,
    /// Anything the plant wants to keep with the spec (available to check plugins).
    #[serde(default)]
    pub notes: BTreeMap<String, String>,
}

impl PartSpec {
    /// Parses and validates a spec; `origin` names the file in errors.
    pub fn from_yaml(origin: &str, text: &str) -> Result<PartSpec, DocumentError> {
        let spec: PartSpec = parse_document(origin, text)?;
        spec.validate(origin, text)?;
        Ok(spec)
    }

    fn validate(&self, origin: &str, text: &str) -> Result<(), DocumentError> {
        let fail = |field: &str, message: String| Err(DocumentError::at_field(origin, text, field, message));
        let [lo, hi] = self.test.window;
        if !(0.0..=1.0).contains(&lo) || !(0.0..=1.0).contains(&hi) || lo >= hi {
            return fail("test.window", format!("the window [{lo}, {hi}] must satisfy 0 ≤ lo < hi ≤ 1"));
        }
        if !(self.test.max_angle_deg.is_finite() && self.test.max_angle_deg > 0.0) {
            return fail("test.max_angle_deg", "the largest test angle must be positive".into());
        }
        if self.geometry.mean_diameter().is_none() {
            return fail("geometry", "give `mean_diameter_mm` or `outside_diameter_mm`".into());
        }
        for (field, value) in [
            ("geometry.wire_diameter_mm", self.geometry.wire_diameter_mm),
            ("geometry.body_coils", self.geometry.body_coils),
            ("material.modulus_n_per_mm2", self.material.modulus_n_per_mm2),
        ] {
            if !(value.is_finite() && value > 0.0) {
                return fail(field, format!("must be positive, found {value}"));
            }
        }
        let c = &self.characteristics;
        let units = c
            .rate_nmm_per_deg
            .iter()
            .map(|r| ("characteristics.rate_nmm_per_deg.tolerance", r.tolerance, ToleranceUnit::NmmPerDeg))
            .chain(
                c.secant_rate.iter().map(|s| {
                    ("characteristics.secant_rate.tolerance", s.tolerance, ToleranceUnit::NmmPerDeg)
                }),
            )
            .chain(
                c.free_angle_deg
                    .iter()
                    .map(|f| ("characteristics.free_angle_deg.tolerance", f.tolerance, ToleranceUnit::Deg)),
            )
            .chain(
                c.torque_at.iter().map(|t| ("characteristics.torque_at", t.tolerance, ToleranceUnit::Nmm)),
            );
        for (field, tolerance, unit) in units {
            if let Err(message) = tolerance.check_unit(unit) {
                return fail(field, message);
            }
        }
        for torque in &self.characteristics.torque_at {
            if torque.angle_deg > self.test.max_angle_deg {
                return fail(
                    "characteristics.torque_at",
                    format!(
                        "torque is specified at {}° but the test only goes to {}°",
                        torque.angle_deg, self.test.max_angle_deg
                    ),
                );
            }
        }
        if let Some(secant) = &self.characteristics.secant_rate {
            if secant.from_deg >= secant.to_deg {
                return fail("characteristics.secant_rate", "`from_deg` must be below `to_deg`".into());
            }
        }
        if let Some(hysteresis) = &self.characteristics.hysteresis {
            if hysteresis.at_angles_deg.is_empty() {
                return fail("characteristics.hysteresis.at_angles_deg", "name at least one angle".into());
            }
        }
        if let Some(inertia) = self.test.inertia_kgm2 {
            if !(inertia.is_finite() && inertia > 0.0) {
                return fail("test.inertia_kgm2", format!("the inertia must be positive, found {inertia}"));
            }
        }
        if let Some(dynamic) = &self.characteristics.dynamic {
            if dynamic.is_empty() {
                return fail(
                    "characteristics.dynamic",
                    "name at least one of `rate_nmm_per_deg`, `frequency_hz`, `amplitude_dependence`".into(),
                );
            }
            if let Some(limit) = &dynamic.amplitude_dependence {
                if !(limit.max_pct.is_finite() && limit.max_pct > 0.0) {
                    return fail(
                        "characteristics.dynamic.amplitude_dependence.max_pct",
                        format!("the limit must be a percentage above zero, found {}", limit.max_pct),
                    );
                }
            }
        }
        Ok(())
    }

    /// Every toleranced characteristic's name and class, for reports and sampling.
    pub fn classes(&self) -> Vec<(String, CharacteristicClass)> {
        let c = &self.characteristics;
        let mut out = Vec::new();
        if let Some(rate) = &c.rate_nmm_per_deg {
            out.push(("rate".to_string(), rate.class));
        }
        if let Some(secant) = &c.secant_rate {
            out.push(("secant_rate".to_string(), secant.class));
        }
        for torque in &c.torque_at {
            out.push((torque_label(torque.angle_deg), torque.class));
        }
        if let Some(free) = &c.free_angle_deg {
            out.push(("free_angle".to_string(), free.class));
        }
        if let Some(hysteresis) = &c.hysteresis {
            out.push(("hysteresis".to_string(), hysteresis.class));
        }
        if let Some(linearity) = &c.linearity {
            out.push(("linearity".to_string(), linearity.class));
        }
        if let Some(dynamic) = &c.dynamic {
            if let Some(rate) = &dynamic.rate_nmm_per_deg {
                out.push((DYNAMIC_RATE.to_string(), rate.class));
            }
            if let Some(frequency) = &dynamic.frequency_hz {
                out.push((FREQUENCY.to_string(), frequency.class));
            }
            if let Some(limit) = &dynamic.amplitude_dependence {
                out.push((AMPLITUDE_DEPENDENCE.to_string(), limit.class));
            }
        }
        out
    }

    /// True when the spec names any characteristic a torque-curve test measures.
    pub fn has_static_characteristics(&self) -> bool {
        let c = &self.characteristics;
        c.rate_nmm_per_deg.is_some()
            || c.secant_rate.is_some()
            || !c.torque_at.is_empty()
            || c.free_angle_deg.is_some()
            || c.hysteresis.is_some()
            || c.linearity.is_some()
    }
}

/// The characteristic name of the dynamic rate from a free swing.
pub const DYNAMIC_RATE: &str = "dynamic_rate";
/// The characteristic name of the natural frequency from a free swing.
pub const FREQUENCY: &str = "frequency";
/// The characteristic name of the period's amplitude dependence in a free swing.
pub const AMPLITUDE_DEPENDENCE: &str = "amplitude_dependence";

/// The characteristic name used for torque at an angle, e.g. `torque@45`.
pub fn torque_label(angle_deg: f64) -> String {
    format!("torque@{angle_deg}")
}

#[cfg(test)]
mod tests {
    use super::*;

    pub(crate) const SPEC: &str = r#"
part: TS-100
revision: B
customer: Example Hinge Co.
material: { name: spring steel wire, modulus_n_per_mm2: 206000 }
geometry:
  wire_diameter_mm: 1.6
  mean_diameter_mm: 14.0
  body_coils: 5.5
  leg_lengths_mm: [20, 25]
  wind: right
test:
  max_angle_deg: 90
  pre_cycles: 1
  window: [0.2, 0.8]
characteristics:
  rate_nmm_per_deg: { nominal: 4.0, tolerance: "±8%", class: major }
  torque_at:
    - { angle_deg: 60, nominal_nmm: 240, tolerance: "+20/-15 N·mm", class: critical }
  free_angle_deg: { nominal: 0, tolerance: 3, class: minor }
  hysteresis: { at_angles_deg: [45], max_pct: 8, class: minor }
  linearity: { max_pct: 3, class: minor }
sampling:
  major: { plan: attribute, aql_pct: 1.0 }
  minor: { plan: attribute, aql_pct: 4.0 }
"#;

    #[test]
    fn a_full_spec_loads() {
        let spec = PartSpec::from_yaml("ts100.yaml", SPEC).unwrap();
        let rate = spec.characteristics.rate_nmm_per_deg.as_ref().unwrap();
        let limits = rate.limits();
        assert!((limits.lower.unwrap() - 3.68).abs() < 1e-12);
        assert!((limits.upper.unwrap() - 4.32).abs() < 1e-12);
        let torque = &spec.characteristics.torque_at[0].limits();
        assert_eq!((torque.lower, torque.upper), (Some(225.0), Some(260.0)));
        let sampling = spec.sampling.as_ref().unwrap();
        assert_eq!(sampling.critical, ClassPlan::ZeroAcceptance);
        assert_eq!(sampling.level, "II");
        assert_eq!(spec.classes().len(), 5);
    }

    #[test]
    fn dynamic_characteristics_load_additively_and_are_checked() {
        let text = SPEC.replace(
            "  linearity: { max_pct: 3, class: minor }\n",
            "  linearity: { max_pct: 3, class: minor }\n  dynamic:\n    rate_nmm_per_deg: { nominal: 4.1, tolerance: \"±10%\", class: major }\n    frequency_hz: { nominal: 2.5, tolerance: \"±5%\", class: minor }\n    amplitude_dependence: { max_pct: 1.5, class: minor }\n",
        )
        .replace("  window: [0.2, 0.8]\n", "  window: [0.2, 0.8]\n  inertia_kgm2: 2.0e-3\n");
        let spec = PartSpec::from_yaml("ts100.yaml", &text).unwrap();
        let dynamic = spec.characteristics.dynamic.as_ref().unwrap();
        assert_eq!(dynamic.frequency_hz.as_ref().unwrap().nominal, 2.5);
        assert_eq!(spec.test.inertia_kgm2, Some(2.0e-3));
        let names: Vec<String> = spec.classes().into_iter().map(|(n, _)| n).collect();
        assert!(names.ends_with(&["dynamic_rate".into(), "frequency".into(), "amplitude_dependence".into()]));
        assert!(spec.has_static_characteristics());

        // A spec without the new fields still loads, with none of them.
        let old = PartSpec::from_yaml("ts100.yaml", SPEC).unwrap();
        assert!(old.characteristics.dynamic.is_none() && old.test.inertia_kgm2.is_none());

        let empty = SPEC.replace("  linearity: { max_pct: 3, class: minor }\n", "  dynamic: {}\n");
        let err = PartSpec::from_yaml("ts100.yaml", &empty).unwrap_err();
        assert_eq!(err.field.as_deref(), Some("characteristics.dynamic"), "{err}");
        let heavy = text.replace("inertia_kgm2: 2.0e-3", "inertia_kgm2: -1");
        let err = PartSpec::from_yaml("ts100.yaml", &heavy).unwrap_err();
        assert_eq!(err.field.as_deref(), Some("test.inertia_kgm2"), "{err}");
    }

    #[test]
    fn tolerance_spellings() {
        let t: Tolerance = "±8%".parse().unwrap();
        assert_eq!(t, Tolerance::new(8.0, 8.0, true));
        let t: Tolerance = "+5 / -3 N·mm".parse().unwrap();
        assert_eq!(t, Tolerance { unit: Some(ToleranceUnit::Nmm), ..Tolerance::new(5.0, 3.0, false) });
        let t: Tolerance = "+4%/-2%".parse().unwrap();
        assert_eq!(t.limits(50.0), Limits { lower: Some(49.0), upper: Some(52.0) });
        for (text, unit) in [
            ("±0.5 N·mm/°", ToleranceUnit::NmmPerDeg),
            ("+/-0.5Nmm/deg", ToleranceUnit::NmmPerDeg),
            ("±4°", ToleranceUnit::Deg),
            ("± 4 deg", ToleranceUnit::Deg),
            ("±12 N.mm", ToleranceUnit::Nmm),
        ] {
            let t: Tolerance = text.parse().unwrap_or_else(|e| panic!("{text}: {e}"));
            assert_eq!(t.unit, Some(unit), "{text}");
            assert!(!t.percent, "{text}");
        }
        assert!("+4%/-2".parse::<Tolerance>().is_err());
        assert!("about 3".parse::<Tolerance>().is_err());
        assert!("±3 furlongs".parse::<Tolerance>().unwrap_err().contains("`furlongs` is not a unit"));
        assert!("±3% N·mm".parse::<Tolerance>().unwrap_err().contains("both a percentage and a unit"));
    }

    #[test]
    fn a_quoted_bare_number_is_refused_with_how_to_write_it() {
        for text in ["10", "±10", "+5/-3", " 0.5 "] {
            let err = text.parse::<Tolerance>().unwrap_err();
            assert!(
                err.contains("no unit and no `%`") && err.contains("%` for a percentage"),
                "{text}: {err}"
            );
        }
        // In a spec the refusal names the file, the line and the field.
        let text = SPEC.replace("tolerance: \"±8%\"", "tolerance: \"10\"");
        let err = PartSpec::from_yaml("ts100.yaml", &text).unwrap_err();
        let line = text.lines().position(|l| l.contains("tolerance: \"10\"")).unwrap() + 1;
        assert_eq!(err.line, Some(line), "{err}");
        let message = err.to_string();
        assert!(message.contains("ts100.yaml") && message.contains("rate_nmm_per_deg"), "{message}");
        assert!(message.contains("`±10%`"), "{message}");
        // An unquoted YAML number still means an amount in the characteristic's unit.
        let text = SPEC.replace("tolerance: \"±8%\"", "tolerance: 0.25");
        let spec = PartSpec::from_yaml("ts100.yaml", &text).unwrap();
        let limits = spec.characteristics.rate_nmm_per_deg.unwrap().limits();
        // Common practice, no published source: an absolute tolerance t gives nominal ± t.
        assert_eq!((limits.lower, limits.upper), (Some(3.75), Some(4.25)));
    }

    #[test]
    fn a_unit_of_another_characteristic_is_refused() {
        let text = SPEC.replace("tolerance: \"±8%\"", "tolerance: \"±0.3 N·mm\"");
        let err = PartSpec::from_yaml("ts100.yaml", &text).unwrap_err();
        assert_eq!(err.field.as_deref(), Some("characteristics.rate_nmm_per_deg.tolerance"), "{err}");
        assert!(err.message.contains("written in N·mm but this characteristic is in N·mm/°"), "{err}");
        let text = SPEC.replace("tolerance: \"±8%\"", "tolerance: \"±0.3 N·mm/°\"");
        let limits = PartSpec::from_yaml("ts100.yaml", &text)
            .unwrap()
            .characteristics
            .rate_nmm_per_deg
            .unwrap()
            .limits();
        // Common practice, no published source: nominal 4.0 ± 0.3 N·mm/°.
        assert!((limits.lower.unwrap() - 3.7).abs() < 1e-12 && (limits.upper.unwrap() - 4.3).abs() < 1e-12);
    }

    #[test]
    fn bad_field_is_reported_with_line() {
        let text = SPEC.replace("tolerance: 3, class: minor", "tolerance: lots, class: minor");
        let err = PartSpec::from_yaml("ts100.yaml", &text).unwrap_err();
        let line = text.lines().position(|l| l.contains("lots")).unwrap() + 1;
        assert_eq!(err.line, Some(line), "{err}");
        assert!(err.to_string().contains("free_angle_deg"), "{err}");
    }

    #[test]
    fn semantic_errors_name_the_field() {
        let text = SPEC.replace("window: [0.2, 0.8]", "window: [0.8, 0.2]");
        let err = PartSpec::from_yaml("ts100.yaml", &text).unwrap_err();
        assert_eq!(err.field.as_deref(), Some("test.window"));
        let line = text.lines().position(|l| l.contains("window:")).unwrap() + 1;
        assert_eq!(err.line, Some(line));

        let text = SPEC.replace("angle_deg: 60", "angle_deg: 120");
        let err = PartSpec::from_yaml("ts100.yaml", &text).unwrap_err();
        assert!(err.message.contains("120"), "{err}");
    }

    #[test]
    fn verdicts_combine() {
        use Verdict::*;
        assert_eq!(Verdict::combine([Pass, Pass]), Pass);
        assert_eq!(Verdict::combine([Pass, Invalid]), Invalid);
        assert_eq!(Verdict::combine([Invalid, Fail, Pass]), Fail);
        assert_eq!(Verdict::combine([]), Pass);
    }
}
