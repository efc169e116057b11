//! Descriptions of every key of a need file, for a form: key, label,
//! unit, kind of value, choices, default, limits, whether it is required,
//! and a one-line hint. The page builds its need form from this list
//! (`need_fields()` of the wasm crate); `docs/need.md` documents the same
//! keys for people.
//!
//! The choices come from the core's enums (`ALL` and `name()`), so a new
//! topology or series shows up here by itself. Defaults and limits are
//! those the need reader applies; tests below hold them to the reader:
//! every key it accepts appears here exactly once, each default is what it
//! fills in, and each limit is where it starts refusing.

use crate::need::{
    Basis, Calibration, Excitation, Objective, SensorOutput, Topology,
    DEFAULT_COMMON_MODE_TOLERANCE_PCT,
};
use crate::series::Series;
use serde::Serialize;
use serde_json::{json, Value};

/// What kind of value a key takes.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "lowercase")]
pub enum FieldKind {
    /// A number (may have a fraction).
    Number,
    /// A whole number.
    Integer,
    /// `true` or `false`.
    Boolean,
    /// Free text.
    Text,
    /// One name from `choices`.
    Choice,
    /// A list of names from `choices`.
    Choices,
}

/// One key of the need, described for a form.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct NeedField {
    /// Dotted key (`adc.high_v`).
    pub key: &'static str,
    /// The table it sits in (`adc`).
    pub section: &'static str,
    /// A short label for people.
    pub label: &'static str,
    /// Its unit (`V`, `%`, `ohm`, ...), or none.
    pub unit: Option<&'static str>,
    /// What kind of value it takes.
    pub kind: FieldKind,
    /// The names allowed, for `choice` and `choices`.
    pub choices: Option<Vec<&'static str>>,
    /// The value the reader fills in when the key is left out (null when
    /// the key is required or has no default).
    pub default: Value,
    /// The lowest value accepted, where there is one.
    pub min: Option<f64>,
    /// The highest value accepted, where there is one.
    pub max: Option<f64>,
    /// The key must be given.
    pub required: bool,
    /// One line on what to enter.
    pub hint: &'static str,
    /// A longer explanation, shown on demand: what the key means and how
    /// it is used.
    pub help: &'static str,
    /// A typical value, in words, where one helps (`None` otherwise).
    pub typical: Option<&'static str>,
    /// `min` itself is refused (the value must be above it). Not in the
    /// JSON; the hint says so in words.
    #[serde(skip)]
    pub min_excluded: bool,
    /// `max` itself is refused (the value must be below it). Not in the
    /// JSON; the hint says so in words.
    #[serde(skip)]
    pub max_excluded: bool,
}

/// A field with no choices, default or limits, not required.
fn field(
    key: &'static str,
    label: &'static str,
    unit: Option<&'static str>,
    kind: FieldKind,
    hint: &'static str,
) -> NeedField {
    NeedField {
        key,
        section: key.split('.').next().unwrap_or(key),
        label,
        unit,
        kind,
        choices: None,
        default: Value::Null,
        min: None,
        max: None,
        required: false,
        hint,
        help: "",
        typical: None,
        min_excluded: false,
        max_excluded: false,
    }
}

impl NeedField {
    fn required(mut self) -> Self {
        self.required = true;
        self
    }

    fn default(mut self, value: Value) -> Self {
        self.default = value;
        self
    }

    fn choices(mut self, names: Vec<&'static str>) -> Self {
        self.choices = Some(names);
        self
    }

    /// Limits; `open` marks a limit that is itself refused.
    fn range(mut self, min: Option<(f64, bool)>, max: Option<(f64, bool)>) -> Self {
        self.min = min.map(|(v, _)| v);
        self.min_excluded = min.is_some_and(|(_, open)| open);
        self.max = max.map(|(v, _)| v);
        self.max_excluded = max.is_some_and(|(_, open)| open);
        self
    }
}

const CLOSED: bool = false;
const OPEN: bool = true;

/// Every key of a need file, table by table in the order of a need file.
pub fn need_fields() -> Vec<NeedField> {
    let mut fields = field_list();
    for f in &mut fields {
        let (help, typical) = help_of(f.key);
        f.help = help;
        f.typical = typical;
    }
    fields
}

/// The longer explanation and a typical value of a key (our own wording;
/// the typical values are ordinary choices, common practice).
// One arm per key: a table of text, as long as the list of keys.
fn help_of(key: &str) -> (&'static str, Option<&'static str>) {
    match key {
        "sensor.label" => ("A name for the sensor channel. It only labels the reports, the schematic and the BOM; it changes nothing in the design.", Some("\"tank pressure\"")),
        "sensor.signal_low_v" => ("The voltage the sensor puts out at the low end of the range you care about. Together with the top value it sets the span the circuit must stretch onto the ADC window. It may be above the top value for a sensor whose output falls as its quantity rises.", Some("0 V to a few mV for a bridge, 1 V for a 1-5 V transmitter")),
        "sensor.signal_high_v" => ("The voltage the sensor puts out at the high end of the range. The span (top minus bottom) and the ADC window give the gain the circuit needs.", Some("10 mV to 100 mV for a bridge")),
        "sensor.quantity_low" => ("The physical value (pressure, temperature, weight ...) at the bottom of the range. With the top value and the unit it lets the page show errors in that unit as well as in % of full scale.", Some("0")),
        "sensor.quantity_high" => ("The physical value at the top of the range, in the same unit as the bottom value.", Some("10 (bar), 150 (degC)")),
        "sensor.quantity_unit" => ("The unit of the physical values, as text. It is only used to label figures.", Some("bar, degC, kg")),
        "sensor.output" => ("How the sensor's output is wired: single-ended (one output against ground) or differential (two outputs whose difference is the signal, as from a bridge). A differential sensor needs a common-mode voltage and a topology that takes a difference.", Some("differential for a bridge")),
        "sensor.common_mode_v" => ("For a differential sensor, the mid voltage of its two outputs against ground. It must leave the amplifier inputs inside their allowed range.", Some("half the excitation of a bridge")),
        "sensor.source_ohms" => ("The resistance between the sensor's output terminals, as an ohmmeter across them would read it with the sensor unpowered. A differential sensor gets half of it in each leg: a bridge of four 350 ohm arms is 350 ohm (175 ohm in each leg). It adds to the input resistors of the amplifier and, with bias currents, adds offset error.", Some("0 for a buffered output, 350 ohm to a few kohm for a bridge")),
        "sensor.source_tolerance_pct" => ("How far the sensor's output resistance may be from the value above, in %. Where that resistance sits in a gain-setting path it moves the gain, and it gets a budget line of its own.", Some("0 when the resistance does not matter, 1 % to 10 % for a bridge")),
        "sensor.source_tempco_ppm_per_c" => ("How much the sensor's output resistance changes per degree, in ppm/degC, counted from 25 degC like every drift. It enters the same budget line as the tolerance.", Some("0, or a few hundred ppm/degC for a metal-film bridge")),
        "sensor.excitation" => ("What powers the sensor. Independent: its own source (a reference, a battery, a self-generating sensor); its output does not follow the supply. Supply: excited from the positive rail, like a bridge across the supply, so its signal and common mode scale with the rail (the values above are at the nominal rail). With the ADC referenced to the same rail (ratiometric) and an offset taken from it too, the supply's tolerance then cancels; an offset from a fixed reference leaves a residue.", Some("supply for a bridge across the rail, independent otherwise")),
        "sensor.common_mode_tolerance_pct" => ("For a differential sensor with its own excitation: how far its common-mode voltage may be from the value above, in % of that value. The common mode is not a reference: it moves the amplifier inputs and, through any mismatch, the output, by this tolerance; a design that makes its offset from it (a difference stage with its ratios mismatched on purpose) carries that on the line CMRR x common-mode voltage. Excited from the supply, the common mode carries the supply's tolerance instead and this key is not allowed. A common mode of 0 V is taken as exact.", Some("5 % (the default, our conservative rule)")),
        "adc.low_v" => ("The lowest input voltage the ADC converts. The circuit maps the bottom of the sensor range here (plus the margin).", Some("0 V")),
        "adc.high_v" => ("The highest input voltage the ADC converts, usually its reference voltage. The circuit maps the top of the sensor range here (minus the margin).", Some("2.5 V, 3.3 V or 4.096 V")),
        "adc.bits" => ("The ADC's resolution. It sets the size of one LSB, in which errors are also shown; quantisation is reported apart from the error budget.", Some("12 or 16 bits")),
        "adc.margin_pct" => ("Room kept free at each end of the ADC window, in % of the window, so that a slightly out-of-range signal still reads instead of clipping.", Some("2 to 5 %")),
        "adc.sample_rate_hz" => ("How often the ADC takes a sample. Anything near or above half this rate folds back into the band, so the filter at the ADC input is checked for its attenuation there.", Some("1 kHz to 100 kHz")),
        "adc.alias_rejection_db" => ("The least attenuation the filter must give at half the sample rate, in dB. Needs the sample rate.", Some("20 dB to 60 dB")),
        "adc.sample_capacitance_pf" => ("For a sampling (switched-capacitor) ADC input: the capacitor it connects at each sample. The filter capacitor must hold enough charge to refill it without a large step. Give it with the acquisition time.", Some("5 pF to 40 pF")),
        "adc.acquisition_time_ns" => ("How long a sampling input stays connected before it converts; the input must settle to half an LSB in this time.", Some("200 ns to 2000 ns")),
        "supply.positive_v" => ("The positive supply of the amplifiers. Outputs and inputs must stay inside the rails the parts allow.", Some("3.3 V or 5 V")),
        "supply.negative_v" => ("The negative supply; 0 for a single supply. A negative rail lets signals go below ground.", Some("0 V (single supply)")),
        "supply.tolerance_pct" => ("How far the positive rail may be from its nominal value. Where the rail sets an offset or the ADC scale, this counts as an error source (unless ratiometric).", Some("5 %")),
        "supply.ratiometric" => ("Tick when the ADC's reference is this same supply. The ADC scale then moves with the rail, so an offset taken from the rail cancels instead of counting as supply error.", Some("ticked when the ADC uses the supply as its reference")),
        "accuracy.max_error_pct_fs" => ("The largest total error allowed, in % of the ADC full scale, over temperature and part tolerances, on the basis chosen below.", Some("0.1 % to 1 %")),
        "accuracy.basis" => ("Which total must meet the target: worst case (every error at its limit at once, the strictest), RSS (independent errors added as a root sum of squares), or yield (the share of Monte Carlo builds that meet the target).", Some("worst-case")),
        "accuracy.yield_pct" => ("With the yield basis: the share of simulated builds that must meet the target.", Some("99 %")),
        "accuracy.temp_min_c" => ("The lowest operating temperature. Part limits are taken as stated at 25 degC; drifts count from there to whichever end of the range is farther away.", Some("0 degC or -40 degC")),
        "accuracy.temp_max_c" => ("The highest operating temperature.", Some("70 degC or 85 degC")),
        "accuracy.calibration" => ("What is trimmed on the finished board at room temperature. Offset removes the error at the low end of the span; two-point removes the fixed errors at both ends, leaving drift and noise. The supply's tolerance is never trimmed away.", Some("none")),
        "accuracy.bandwidth_hz" => ("How fast the signal changes. It sets the noise bandwidth and the gain-bandwidth the amplifiers must have.", Some("10 Hz for a slow sensor")),
        "accuracy.noise_low_hz" => ("The slowest change the noise line counts as noise. Amplifier noise rises below its 1/f corner; what changes more slowly than this looks like drift over your measurement. Roughly one over the longest time you compare readings over.", Some("0.1 Hz (readings compared over about 10 s)")),
        "search.max_stages" => ("The most amplifier stages a design may use. More stages allow more gain per design but add parts and error sources.", Some("2 or 3")),
        "search.topologies" => ("The amplifier families the search may try. Leave them all ticked unless you want to rule one out.", None),
        "search.resistor_series" => ("The standard value series the search may use for resistors where the shelf does not fix the values.", Some("E96")),
        "search.objective" => ("What the search makes as small as possible among the designs that meet the target.", Some("cost")),
        "search.bom_line_cost" => ("A fixed cost for each distinct part number on the BOM (handling, a feeder, a reel), so that the search prefers fewer different parts.", Some("0")),
        "search.max_parts" => (
            "The most parts a design may have, its filter pair at the ADC input not counted.",
            Some("30"),
        ),
        "search.time_limit_ms" => ("How long the search may run. When it ends early the best design found is shown and the page says it is not proven the cheapest.", Some("2000 ms")),
        "stock.path" => ("For the command line only: the folder of the stock CSV files, relative to the need file. The page uses the shelf shown on it instead.", None),
        "stock.only" => ("Use only parts on the shelf. When cleared, the search may also use resistor values from the series that are not stocked.", Some("ticked")),
        _ => ("", None),
    }
}

/// The keys with their labels, units, kinds, limits and hints.
// A flat list of data, one entry per key; splitting it would only scatter
// the keys of one table.
fn field_list() -> Vec<NeedField> {
    use FieldKind::*;
    let v = Some("V");
    let pct = Some("%");
    vec![
        field("sensor.label", "Sensor label", None, Text,
            "Free text shown on the reports and the schematic (up to 200 characters).")
            .default(json!("sensor")),
        field("sensor.signal_low_v", "Sensor output at the bottom of the range", v, Number,
            "The sensor's output voltage at the low end of what it measures.")
            .required(),
        field("sensor.signal_high_v", "Sensor output at the top of the range", v, Number,
            "The sensor's output voltage at the high end; must differ from the low end.")
            .required(),
        field("sensor.quantity_low", "Physical value at the bottom", None, Number,
            "What the sensor measures at signal_low_v; give all three quantity keys or none."),
        field("sensor.quantity_high", "Physical value at the top", None, Number,
            "What the sensor measures at signal_high_v; must differ from quantity_low."),
        field("sensor.quantity_unit", "Unit of the physical value", None, Text,
            "The unit of quantity_low and quantity_high (bar, degC, kg ...)."),
        field("sensor.output", "Sensor output wiring", None, Choice,
            "Single-ended against ground, or differential between two outputs.")
            .choices(SensorOutput::ALL.iter().map(|o| o.name()).collect())
            .default(json!(SensorOutput::SingleEnded.name())),
        field("sensor.common_mode_v", "Common-mode voltage", v, Number,
            "Required for a differential sensor (the mid voltage of its outputs); not allowed otherwise."),
        field("sensor.source_ohms", "Sensor output resistance", Some("ohm"), Number,
            "Resistance between the sensor's terminals (half in each leg when differential); 0 or more.")
            .default(json!(0.0))
            .range(Some((0.0, CLOSED)), None),
        field("sensor.source_tolerance_pct", "Sensor resistance tolerance", pct, Number,
            "Tolerance of the sensor's output resistance; 0 (exact) to below 100 %.")
            .default(json!(0.0))
            .range(Some((0.0, CLOSED)), Some((100.0, OPEN))),
        field("sensor.source_tempco_ppm_per_c", "Sensor resistance tempco", Some("ppm/degC"), Number,
            "Temperature coefficient of the sensor's output resistance; 0 for none.")
            .default(json!(0.0))
            .range(Some((-100_000.0, CLOSED)), Some((100_000.0, CLOSED))),
        field("sensor.excitation", "Sensor excitation", None, Choice,
            "Independent of the supply, or from the positive supply (signal and common mode scale with it).")
            .choices(Excitation::ALL.iter().map(|e| e.name()).collect())
            .default(json!(Excitation::Independent.name())),
        field("sensor.common_mode_tolerance_pct", "Common-mode tolerance", pct, Number,
            "Differential sensor with its own excitation only: tolerance of its common mode, 0 to below 100 %.")
            .default(json!(DEFAULT_COMMON_MODE_TOLERANCE_PCT))
            .range(Some((0.0, CLOSED)), Some((100.0, OPEN))),
        field("adc.low_v", "ADC window bottom", v, Number,
            "Lowest input voltage the ADC converts; inside the supply rails.")
            .required(),
        field("adc.high_v", "ADC window top", v, Number,
            "Highest input voltage the ADC converts; above adc.low_v and inside the rails.")
            .required(),
        field("adc.bits", "ADC resolution", Some("bits"), Integer,
            "Resolution of the converter, 1 to 32 bits.")
            .required()
            .range(Some((1.0, CLOSED)), Some((32.0, CLOSED))),
        field("adc.margin_pct", "Margin at each end of the window", pct, Number,
            "Share of the window kept free at each end, from 0 to below 50 %.")
            .default(json!(0.0))
            .range(Some((0.0, CLOSED)), Some((50.0, OPEN))),
        field("adc.sample_rate_hz", "Sample rate", Some("Hz"), Number,
            "Samples per second; the filter's rejection at half of it is reported. Optional.")
            .range(Some((1e-3, CLOSED)), Some((1e10, CLOSED))),
        field("adc.alias_rejection_db", "Rejection at half the sample rate", Some("dB"), Number,
            "Least attenuation of the filter at half the sample rate; needs sample_rate_hz. Optional.")
            .range(Some((0.0, CLOSED)), Some((200.0, CLOSED))),
        field("adc.sample_capacitance_pf", "Sampling capacitance", Some("pF"), Number,
            "The capacitor a switched-capacitor input connects at each sample; with acquisition_time_ns. Optional.")
            .range(Some((1e-3, CLOSED)), Some((1e6, CLOSED))),
        field("adc.acquisition_time_ns", "Acquisition time", Some("ns"), Number,
            "How long a sampling input stays connected; the input must settle to 1/2 LSB in it. Optional.")
            .range(Some((1e-3, CLOSED)), Some((1e12, CLOSED))),
        field("supply.positive_v", "Positive rail", v, Number,
            "The positive supply voltage; above the negative rail.")
            .required(),
        field("supply.negative_v", "Negative rail", v, Number,
            "The negative supply voltage; 0 for a single supply.")
            .default(json!(0.0)),
        field("supply.tolerance_pct", "Supply tolerance", pct, Number,
            "Tolerance of the positive rail where it sets an offset or the ADC scale; 0 to below 100 %.")
            .default(json!(5.0))
            .range(Some((0.0, CLOSED)), Some((100.0, OPEN))),
        field("supply.ratiometric", "ADC reference is the supply", None, Boolean,
            "True when the ADC's reference is this same supply, so its changes cancel.")
            .default(json!(false)),
        field("accuracy.max_error_pct_fs", "Error target", Some("% FS"), Number,
            "Largest error allowed, in % of the ADC full scale; above 0 and at most 100.")
            .required()
            .range(Some((0.0, OPEN)), Some((100.0, CLOSED))),
        field("accuracy.basis", "Error basis", None, Choice,
            "Which total must meet the target: worst case, RSS, or Monte Carlo yield.")
            .choices(Basis::ALL.iter().map(|b| b.name()).collect())
            .default(json!(Basis::WorstCase.name())),
        field("accuracy.yield_pct", "Yield target", pct, Number,
            "Share of builds that must meet the target when the basis is yield; above 0 and below 100.")
            .default(json!(99.0))
            .range(Some((0.0, OPEN)), Some((100.0, OPEN))),
        field("accuracy.temp_min_c", "Lowest temperature", Some("degC"), Number,
            "Lowest operating temperature; at most temp_max_c.")
            .default(json!(0.0))
            .range(Some((-273.15, CLOSED)), None),
        field("accuracy.temp_max_c", "Highest temperature", Some("degC"), Number,
            "Highest operating temperature; at least temp_min_c.")
            .default(json!(70.0))
            .range(Some((-273.15, CLOSED)), None),
        field("accuracy.calibration", "Calibration on the board", None, Choice,
            "The trim done after assembly: none, offset only, or gain and offset (two-point).")
            .choices(Calibration::ALL.iter().map(|c| c.name()).collect())
            .default(json!(Calibration::None.name())),
        field("accuracy.bandwidth_hz", "Signal bandwidth", Some("Hz"), Number,
            "Bandwidth of the signal, for noise and gain-bandwidth; above 0.")
            .default(json!(10.0))
            .range(Some((0.0, OPEN)), None),
        field("accuracy.noise_low_hz", "Lowest noise frequency", Some("Hz"), Number,
            "Lowest frequency the noise line integrates from (1/f noise below it is drift); above 0.")
            .default(json!(0.1))
            .range(Some((0.0, OPEN)), None),
        field("search.max_stages", "Most stages", None, Integer,
            "Largest number of amplifier stages a design may have, 1 to 3.")
            .default(json!(3))
            .range(Some((1.0, CLOSED)), Some((3.0, CLOSED))),
        field("search.topologies", "Topologies allowed", None, Choices,
            "The amplifier families the search may use; at least one.")
            .choices(Topology::ALL.iter().map(|t| t.name()).collect())
            .default(json!(Topology::ALL.iter().map(|t| t.name()).collect::<Vec<_>>())),
        field("search.resistor_series", "Resistor series", None, Choices,
            "Standard series used where the stock does not fix the values; at least one.")
            .choices(Series::ALL.iter().map(|s| s.name()).collect())
            .default(json!([Series::E96.name()])),
        field("search.objective", "What to minimise", None, Choice,
            "What the search makes smallest among designs that meet the target.")
            .choices(Objective::ALL.iter().map(|o| o.name()).collect())
            .default(json!(Objective::Cost.name())),
        field("search.bom_line_cost", "Cost per BOM line", None, Number,
            "A fee added once per distinct part number, in the stock's currency; 0 or more.")
            .default(json!(0.0))
            .range(Some((0.0, CLOSED)), None),
        field("search.max_parts", "Most parts", None, Integer,
            "Largest number of parts on the board, 1 to 10000.")
            .default(json!(30))
            .range(Some((1.0, CLOSED)), Some((10_000.0, CLOSED))),
        field("search.time_limit_ms", "Search time limit", Some("ms"), Integer,
            "Time budget of the search, 1 ms to one hour (3600000 ms).")
            .default(json!(2000))
            .range(Some((1.0, CLOSED)), Some((3_600_000.0, CLOSED))),
        field("stock.path", "Stock folder", None, Text,
            "Command line only: folder of stock CSV files, relative to the need file; leave out for the demo stock."),
        field("stock.only", "Stock parts only", None, Boolean,
            "Use nothing that is not in the stock.")
            .default(json!(true)),
    ]
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::need::parse_need;

    /// A need with only the required keys, as a JSON object.
    fn minimal() -> Value {
        json!({
            "sensor": {"signal_low_v": 0.0, "signal_high_v": 0.01},
            "adc": {"low_v": 0.0, "high_v": 3.3, "bits": 12},
            "supply": {"positive_v": 5.0},
            "accuracy": {"max_error_pct_fs": 1.0},
        })
    }

    fn with(mut need: Value, key: &str, value: Value) -> Value {
        let (table, name) = key.split_once('.').unwrap();
        if need.get(table).is_none() {
            need[table] = json!({});
        }
        need[table][name] = value;
        need
    }

    fn parse(need: &Value) -> crate::Result<crate::need::Need> {
        parse_need(need.to_string().as_bytes(), "fields.json")
    }

    fn error_key(need: &Value) -> Option<String> {
        let e = parse(need).expect_err("expected the need to be refused");
        e.location().and_then(|at| at.key.clone())
    }

    #[test]
    fn keys_are_unique_and_sit_in_their_section() {
        let fields = need_fields();
        let mut keys: Vec<&str> = fields.iter().map(|f| f.key).collect();
        keys.sort_unstable();
        keys.dedup();
        assert_eq!(keys.len(), fields.len());
        for f in &fields {
            assert_eq!(f.key.split_once('.').map(|(t, _)| t), Some(f.section));
            assert!(!f.label.is_empty() && !f.hint.is_empty(), "{}", f.key);
            assert!(!f.hint.contains('\n'), "{}", f.key);
            assert!(!f.help.is_empty(), "{} has a longer help", f.key);
            let has_choices = matches!(f.kind, FieldKind::Choice | FieldKind::Choices);
            assert_eq!(f.choices.is_some(), has_choices, "{}", f.key);
            assert!(!f.required || f.default.is_null(), "{}", f.key);
        }
    }

    /// The keys the reader accepts, table by table, are the ones it lists
    /// when it refuses an unknown key: exactly the fields of that section,
    /// in the same order, and the tables are the sections.
    #[test]
    fn every_key_the_reader_accepts_appears_once() {
        let fields = need_fields();
        let listed = |message: &str| -> Vec<String> {
            let list = message.rsplit(": ").next().unwrap_or("");
            list.split(", ").map(str::to_string).collect()
        };
        let mut sections: Vec<&str> = fields.iter().map(|f| f.section).collect();
        sections.dedup();
        let e = parse(&with(minimal(), "nosuchtable.x", json!(1))).unwrap_err();
        assert_eq!(listed(&e.to_string()), sections, "{e}");
        for section in &sections {
            let e =
                parse(&with(minimal(), &format!("{section}.zz_unknown"), json!(1))).unwrap_err();
            let ours: Vec<String> = fields
                .iter()
                .filter(|f| f.section == *section)
                .map(|f| f.key.split_once('.').unwrap().1.to_string())
                .collect();
            assert_eq!(listed(&e.to_string()), ours, "{e}");
        }
    }

    /// A need giving every key (the default, or a sample value) reads.
    #[test]
    fn a_need_with_every_key_reads() {
        let mut need = minimal();
        for f in need_fields() {
            let value = match f.key {
                "sensor.output" => json!("differential"),
                "sensor.common_mode_v" => json!(2.5),
                "sensor.quantity_low" => json!(0.0),
                "sensor.quantity_high" => json!(10.0),
                "sensor.quantity_unit" => json!("bar"),
                "stock.path" => json!("shelf"),
                "adc.sample_rate_hz" => json!(1000.0),
                "adc.alias_rejection_db" => json!(40.0),
                "adc.sample_capacitance_pf" => json!(10.0),
                "adc.acquisition_time_ns" => json!(500.0),
                _ if f.required => continue,
                _ => f.default.clone(),
            };
            need = with(need, f.key, value);
        }
        let read = parse(&need).unwrap();
        assert_eq!(read.stock.path.as_deref(), Some("shelf"));
    }

    /// The minimal need with a differential sensor.
    fn minimal_differential() -> Value {
        let need = with(minimal(), "sensor.output", json!("differential"));
        with(need, "sensor.common_mode_v", json!(2.5))
    }

    /// Giving a key its documented default reads the same as leaving it out.
    #[test]
    fn defaults_are_what_the_reader_fills_in() {
        for f in need_fields().iter().filter(|f| !f.default.is_null()) {
            // The common mode's tolerance applies to a differential sensor.
            let minimal = || {
                if f.key == "sensor.common_mode_tolerance_pct" {
                    minimal_differential()
                } else {
                    minimal()
                }
            };
            let plain = parse(&minimal()).unwrap();
            let given = parse(&with(minimal(), f.key, f.default.clone()))
                .unwrap_or_else(|e| panic!("{}: {e}", f.key));
            assert_eq!(given, plain, "default of {}", f.key);
            // And a default is not what every value reads as.
            if let Some(choices) = &f.choices {
                for c in choices {
                    let other = match f.kind {
                        FieldKind::Choices => json!([c]),
                        _ => json!(c),
                    };
                    if other == f.default {
                        continue;
                    }
                    let mut need = with(minimal(), f.key, other);
                    if *c == "differential" {
                        need = with(need, "sensor.common_mode_v", json!(2.5));
                    }
                    let read = parse(&need).unwrap_or_else(|e| panic!("{}: {e}", f.key));
                    assert_ne!(read, plain, "{} = {c}", f.key);
                }
            }
        }
    }

    /// Every limit is where the reader starts refusing, naming the key.
    #[test]
    fn limits_are_where_the_reader_refuses() {
        // Room for the lowest temperatures: temp_min_c <= temp_max_c.
        let base = with(minimal(), "accuracy.temp_min_c", json!(-273.15));
        for f in need_fields() {
            let step = if f.kind == FieldKind::Integer {
                1.0
            } else {
                0.001
            };
            let number = |x: f64| {
                if f.kind == FieldKind::Integer {
                    json!(x as i64)
                } else {
                    json!(x)
                }
            };
            let mut need = base.clone();
            if f.key == "accuracy.temp_min_c" {
                need = with(need, "accuracy.temp_max_c", json!(70.0));
            }
            // Keys that come in pairs get their companion.
            match f.key {
                "adc.alias_rejection_db" => need = with(need, "adc.sample_rate_hz", json!(1e3)),
                "adc.sample_capacitance_pf" => {
                    need = with(need, "adc.acquisition_time_ns", json!(500.0))
                }
                "adc.acquisition_time_ns" => {
                    need = with(need, "adc.sample_capacitance_pf", json!(10.0))
                }
                "sensor.common_mode_tolerance_pct" => {
                    need = with(need, "sensor.output", json!("differential"));
                    need = with(need, "sensor.common_mode_v", json!(2.5));
                }
                _ => {}
            }
            if let Some(min) = f.min {
                let below = with(need.clone(), f.key, number(min - step));
                assert_eq!(error_key(&below).as_deref(), Some(f.key), "below {min}");
                let at = with(need.clone(), f.key, number(min));
                assert_eq!(parse(&at).is_err(), f.min_excluded, "{} = {min}", f.key);
            }
            if let Some(max) = f.max {
                let above = with(need.clone(), f.key, number(max + step));
                assert_eq!(error_key(&above).as_deref(), Some(f.key), "above {max}");
                let at = with(need.clone(), f.key, number(max));
                assert_eq!(parse(&at).is_err(), f.max_excluded, "{} = {max}", f.key);
            }
        }
    }

    /// Each required key left out is refused, naming the key.
    #[test]
    fn required_keys_are_required() {
        let fields = need_fields();
        let required: Vec<&NeedField> = fields.iter().filter(|f| f.required).collect();
        assert_eq!(required.len(), 7);
        for f in required {
            let mut need = minimal();
            let (table, name) = f.key.split_once('.').unwrap();
            need[table].as_object_mut().unwrap().remove(name);
            assert_eq!(error_key(&need).as_deref(), Some(f.key));
        }
    }

    /// A name that is no choice is refused.
    #[test]
    fn other_names_are_refused() {
        for f in need_fields().iter().filter(|f| f.choices.is_some()) {
            let need = with(minimal(), f.key, json!("no-such-choice"));
            assert_eq!(error_key(&need).as_deref(), Some(f.key));
        }
    }

    /// The enums' names are the names serde writes them as.
    #[test]
    fn enum_names_match_their_serde_names() {
        let serde_name = |v: Value| v.as_str().unwrap_or_default().to_string();
        for o in SensorOutput::ALL {
            assert_eq!(serde_name(json!(o)), o.name());
        }
        for e in Excitation::ALL {
            assert_eq!(serde_name(json!(e)), e.name());
        }
        for b in Basis::ALL {
            assert_eq!(serde_name(json!(b)), b.name());
        }
        for c in Calibration::ALL {
            assert_eq!(serde_name(json!(c)), c.name());
        }
        for o in Objective::ALL {
            assert_eq!(serde_name(json!(o)), o.name());
        }
    }
}
