//! The stock: parts the user can buy or has on the shelf, parsed from the
//! CSV files of `docs/stock.md` (`resistors.csv`, `opamps.csv`,
//! `references.csv`, `inamps.csv`, `capacitors.csv`, `networks.csv`).
//! Resistor and
//! capacitor families expand here into one part per series value, so the
//! rest of the core sees only concrete values.

use crate::error::Result;
use crate::series::{value_code, Series};
use crate::units::{Decibels, Farads, Ohms, Percent, PpmPerC, Volts};
use serde::{Deserialize, Serialize};

/// One resistor value that can be placed (a single row, or one value of a
/// family).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct ResistorPart {
    /// Part number shown on the BOM (families: `<family id>-<value code>`).
    pub part_id: String,
    /// Nominal value.
    pub value: Ohms,
    /// Initial tolerance (+/-).
    pub tolerance: Percent,
    /// Temperature coefficient (+/-).
    pub tcr: PpmPerC,
    /// Package text.
    pub package: String,
    /// Price of one.
    pub unit_cost: f64,
    /// Quantity on hand; `None` means unlimited (a series family).
    pub stock_qty: Option<u32>,
    /// The family row it came from, if any.
    pub family: Option<String>,
}

/// One capacitor value that can be placed (a single row, or one value of
/// a family).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct CapacitorPart {
    /// Part number shown on the BOM (families: `<family id>-<value code>`,
    /// the code in picofarads as [`capacitor_code`] writes it).
    pub part_id: String,
    /// Nominal value.
    pub value: Farads,
    /// Initial tolerance (+/-).
    pub tolerance: Percent,
    /// Temperature coefficient (+/-).
    pub tempco: PpmPerC,
    /// Dielectric text (`C0G`, `X7R`, `film` ...), as written in the table.
    pub dielectric: String,
    /// Rated voltage.
    pub rated: Volts,
    /// Package text.
    pub package: String,
    /// Price of one.
    pub unit_cost: f64,
    /// Quantity on hand; `None` means unlimited.
    pub stock_qty: Option<u32>,
    /// The family row it came from, if any.
    pub family: Option<String>,
}

/// The value code of a capacitance in a family part id: three significant
/// digits with the multiplier letter (`p`, `n`, `u`, `m`) in place of the
/// decimal point: 4.7 nF is `4n70`, 100 pF `100p`, 2.2 uF `2u20`.
pub fn capacitor_code(farads: f64) -> String {
    if !(farads.is_finite() && farads > 0.0) {
        return "?".to_string();
    }
    // The resistor code of the value in picofarads, with its letters
    // (R, K, M, G: x1, x1e3, x1e6, x1e9) read as p, n, u, m.
    value_code(farads * 1e12)
        .chars()
        .map(|c| match c {
            'R' => 'p',
            'K' => 'n',
            'M' => 'u',
            'G' => 'm',
            other => other,
        })
        .collect()
}

/// An op-amp part (one package with `channels` sections).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct OpAmpPart {
    /// Part number.
    pub part_id: String,
    /// Sections per package (1, 2 or 4).
    pub channels: u32,
    /// Lowest total supply (positive minus negative rail).
    pub supply_min: Volts,
    /// Highest total supply.
    pub supply_max: Volts,
    /// Input common mode may come this close to the negative rail (0 = rail to rail).
    pub input_headroom_low: Volts,
    /// Input common mode may come this close to the positive rail.
    pub input_headroom_high: Volts,
    /// Output swings this close to the negative rail.
    pub output_headroom_low: Volts,
    /// Output swings this close to the positive rail.
    pub output_headroom_high: Volts,
    /// Input offset voltage limit, in microvolts.
    pub vos_max_uv: f64,
    /// Offset drift limit, in microvolts per degC.
    pub vos_drift_uv_per_c: f64,
    /// Input bias current limit, in nanoamps.
    pub ib_max_na: f64,
    /// Input offset current limit, in nanoamps.
    pub ios_max_na: f64,
    /// Minimum open-loop gain.
    pub aol_min: Decibels,
    /// Gain-bandwidth product in MHz.
    pub gbw_mhz: f64,
    /// Voltage noise density, nV/sqrt(Hz).
    pub en_nv_rthz: f64,
    /// Current noise density, pA/sqrt(Hz).
    pub in_pa_rthz: f64,
    /// Minimum common-mode rejection.
    pub cmrr_min: Decibels,
    /// Price of one package.
    pub unit_cost: f64,
    /// Packages on hand.
    pub stock_qty: Option<u32>,
    /// Open-loop output resistance in ohms (optional column
    /// `output_ohms`; [`DEFAULT_OUTPUT_OHMS`] when absent).
    #[serde(default = "default_output_ohms")]
    pub output_ohms: f64,
    /// Temperature rise over which the bias and offset current limits
    /// double (optional column `ib_doubling_c`, for FET and CMOS inputs):
    /// `ib_max_na` and `ios_max_na` are then their limits at 25 degC. `None`
    /// (absent): they are the limits over the whole temperature range.
    #[serde(default)]
    pub ib_doubling_c: Option<f64>,
    /// Minimum power-supply rejection (optional column `psrr_min_db`;
    /// [`DEFAULT_PSRR_DB`] when absent).
    #[serde(default = "default_psrr")]
    pub psrr_min: Decibels,
    /// Largest current the output may source or sink, mA (optional
    /// column `output_current_ma`; [`DEFAULT_OUTPUT_CURRENT_MA`] when
    /// absent).
    #[serde(default = "default_output_current")]
    pub output_current_ma: f64,
    /// Corner of the input voltage noise's 1/f part, Hz: the density is
    /// `en^2 (1 + fc/f)` (optional column `en_corner_hz`;
    /// [`DEFAULT_EN_CORNER_HZ`] when absent; 0 for none).
    #[serde(default = "default_en_corner")]
    pub en_corner_hz: f64,
    /// Corner of the input current noise's 1/f part, Hz: the density is
    /// `in^2 (1 + fc/f)` (optional column `in_corner_hz`;
    /// [`DEFAULT_IN_CORNER_HZ`] when absent: white current noise).
    #[serde(default = "default_in_corner")]
    pub in_corner_hz: f64,
}

/// Output current taken for an amplifier whose row has no
/// `output_current_ma`: 10 mA, which small-signal op-amps and in-amps
/// can source and sink while still meeting their swing (common practice,
/// from memory; our rule).
pub const DEFAULT_OUTPUT_CURRENT_MA: f64 = 10.0;

fn default_output_current() -> f64 {
    DEFAULT_OUTPUT_CURRENT_MA
}

/// 1/f corner of the voltage noise taken for an amplifier whose row has
/// no `en_corner_hz`: 100 Hz, at the high end of bipolar and JFET inputs
/// and typical of general-purpose CMOS inputs (common practice, from
/// memory; our rule; a zero-drift part states its own, near 0).
pub const DEFAULT_EN_CORNER_HZ: f64 = 100.0;

fn default_en_corner() -> f64 {
    DEFAULT_EN_CORNER_HZ
}

/// 1/f corner of the current noise taken for an op-amp whose row has no
/// `in_corner_hz`: 0, white current noise (what the noise line took before
/// the column existed, so older stock files give the same results; our
/// rule). A bipolar input's current noise has a 1/f part of its own;
/// state it where the part's figure is known.
pub const DEFAULT_IN_CORNER_HZ: f64 = 0.0;

fn default_in_corner() -> f64 {
    DEFAULT_IN_CORNER_HZ
}

/// Power-supply rejection taken for an amplifier whose row has no
/// `psrr_min_db`: 70 dB, below the minimum most general-purpose and
/// precision op-amps and in-amps specify at DC, so a part without the
/// figure is not flattered (common practice, from memory; our rule).
pub const DEFAULT_PSRR_DB: f64 = 70.0;

fn default_psrr() -> Decibels {
    Decibels(DEFAULT_PSRR_DB)
}

/// Load regulation taken for a reference whose row has no
/// `load_regulation_ppm_per_ma`: 100 ppm of its output per mA of load,
/// at the poor end of what small series references specify (common
/// practice, from memory; our rule).
pub const DEFAULT_LOAD_REGULATION_PPM_PER_MA: f64 = 100.0;

/// Largest load current taken for a reference whose row has no
/// `max_load_ma`: 1 mA, which small series references can source
/// (common practice, from memory; our rule).
pub const DEFAULT_MAX_LOAD_MA: f64 = 1.0;

fn default_load_regulation() -> f64 {
    DEFAULT_LOAD_REGULATION_PPM_PER_MA
}

fn default_max_load() -> f64 {
    DEFAULT_MAX_LOAD_MA
}

/// Open-loop output resistance taken for an op-amp whose row has no
/// `output_ohms`: 100 ohms, a conservative figure for small-signal CMOS
/// and bipolar parts (common practice, from memory).
pub const DEFAULT_OUTPUT_OHMS: f64 = 100.0;

fn default_output_ohms() -> f64 {
    DEFAULT_OUTPUT_OHMS
}

/// A voltage reference part.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct ReferencePart {
    /// Part number.
    pub part_id: String,
    /// Nominal output.
    pub volts: Volts,
    /// Initial accuracy (+/-).
    pub initial: Percent,
    /// Temperature coefficient (+/-).
    pub tempco: PpmPerC,
    /// Least supply above the output it needs.
    pub dropout: Volts,
    /// Output noise, microvolts peak to peak (0.1-10 Hz).
    pub noise_uv_pp: f64,
    /// Price of one.
    pub unit_cost: f64,
    /// Quantity on hand.
    pub stock_qty: Option<u32>,
    /// Change of the output per mA of load current, ppm of the output
    /// (optional column `load_regulation_ppm_per_ma`;
    /// [`DEFAULT_LOAD_REGULATION_PPM_PER_MA`] when absent).
    #[serde(default = "default_load_regulation")]
    pub load_regulation_ppm_per_ma: f64,
    /// Largest load current the output may source, mA (optional column
    /// `max_load_ma`; [`DEFAULT_MAX_LOAD_MA`] when absent).
    #[serde(default = "default_max_load")]
    pub max_load_ma: f64,
}

/// An integrated instrumentation amplifier, gain `1 + Rk/Rg`.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct InAmpPart {
    /// Part number.
    pub part_id: String,
    /// The gain-setting constant `Rk` (ohms).
    pub gain_resistor: Ohms,
    /// Gain error limit (+/-).
    pub gain_error: Percent,
    /// Gain drift limit (+/-).
    pub gain_drift: PpmPerC,
    /// Input offset voltage limit, microvolts.
    pub input_offset_uv: f64,
    /// Output offset voltage limit, microvolts.
    pub output_offset_uv: f64,
    /// Input offset drift, microvolts per degC.
    pub offset_drift_uv_per_c: f64,
    /// Input bias current limit, nanoamps.
    pub ib_max_na: f64,
    /// Minimum common-mode rejection (at unity gain).
    pub cmrr_min: Decibels,
    /// Lowest total supply.
    pub supply_min: Volts,
    /// Highest total supply.
    pub supply_max: Volts,
    /// Input common-mode headroom to the negative rail.
    pub input_headroom_low: Volts,
    /// Input common-mode headroom to the positive rail.
    pub input_headroom_high: Volts,
    /// Output headroom to the negative rail.
    pub output_headroom_low: Volts,
    /// Output headroom to the positive rail.
    pub output_headroom_high: Volts,
    /// Input voltage noise density, nV/sqrt(Hz).
    pub en_nv_rthz: f64,
    /// Gain-bandwidth product in MHz.
    pub gbw_mhz: f64,
    /// Price of one.
    pub unit_cost: f64,
    /// Quantity on hand.
    pub stock_qty: Option<u32>,
    /// Temperature rise over which the bias current limit doubles
    /// (optional column `ib_doubling_c`; as for op-amps).
    #[serde(default)]
    pub ib_doubling_c: Option<f64>,
    /// Minimum power-supply rejection, input-referred (optional column
    /// `psrr_min_db`; [`DEFAULT_PSRR_DB`] when absent).
    #[serde(default = "default_psrr")]
    pub psrr_min: Decibels,
    /// Largest current the output may source or sink, mA (optional
    /// column `output_current_ma`; as for op-amps).
    #[serde(default = "default_output_current")]
    pub output_current_ma: f64,
    /// Corner of the input voltage noise's 1/f part, Hz (optional column
    /// `en_corner_hz`; as for op-amps).
    #[serde(default = "default_en_corner")]
    pub en_corner_hz: f64,
}

/// A matched resistor network: several resistors in one package whose
/// values track each other more closely than their absolute values
/// (`networks.csv`). Each element's deviation is modelled as one common
/// deviation of the package (within the absolute figures) plus its own
/// (within half the ratio figures, so the ratio of any two elements stays
/// within the ratio figures).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct NetworkPart {
    /// Part number of the package.
    pub part_id: String,
    /// Nominal value of each element, element 1 first.
    pub values: Vec<Ohms>,
    /// Absolute tolerance of each element (+/-).
    pub abs_tolerance: Percent,
    /// Ratio tolerance: the ratio of any two elements lies within this of
    /// its nominal (+/-).
    pub ratio_tolerance: Percent,
    /// Absolute TCR of each element (+/-).
    pub abs_tcr: PpmPerC,
    /// TCR tracking: the ratio of any two elements drifts by at most this
    /// (+/-).
    pub tracking_tcr: PpmPerC,
    /// Package text.
    pub package: String,
    /// Price of one package.
    pub unit_cost: f64,
    /// Packages on hand; `None` means unlimited.
    pub stock_qty: Option<u32>,
}

/// All parts available to a design.
#[derive(Debug, Clone, PartialEq, Default, Serialize, Deserialize)]
pub struct Stock {
    /// Resistor values, sorted by value then by cost.
    pub resistors: Vec<ResistorPart>,
    /// Op-amps.
    pub opamps: Vec<OpAmpPart>,
    /// Voltage references.
    pub references: Vec<ReferencePart>,
    /// Integrated in-amps.
    pub inamps: Vec<InAmpPart>,
    /// Capacitor values, sorted by value then by cost (may be empty: a
    /// design then has no filter capacitor).
    #[serde(default)]
    pub capacitors: Vec<CapacitorPart>,
    /// Matched resistor networks (may be empty).
    #[serde(default)]
    pub networks: Vec<NetworkPart>,
}

/// One stock file handed to the parser: its name (`resistors.csv` ...) and
/// its raw bytes.
#[derive(Debug, Clone)]
pub struct StockFile {
    /// File name; the kind of table is taken from it.
    pub name: String,
    /// Raw bytes (UTF-8 expected; anything else is reported).
    pub bytes: Vec<u8>,
}

/// Parse and validate stock tables. Files are recognised by name
/// (`resistors.csv`, `opamps.csv`, `references.csv`, `inamps.csv`,
/// `capacitors.csv`, `networks.csv`); a missing table is an empty one, but a stock with no resistors or no
/// amplifiers at all is an error.
pub fn parse_stock(files: &[StockFile]) -> Result<Stock> {
    crate::stock_parse::parse_stock(files)
}

/// Range of the generic series parts that stand in for the stock when a
/// need says `stock.only = false`, in ohms.
pub const GENERIC_RANGE_OHMS: (f64, f64) = (10.0, 1e6);

/// Grade of the generic parts of a series: tolerance in %, TCR in
/// ppm/degC and unit cost (1 % and 100 ppm/degC for E48 and E96, 0.5 % and
/// 50 ppm/degC for E192, 5 % and 200 ppm/degC below; common practice).
pub fn generic_grade(series: Series) -> (f64, f64, f64) {
    match series {
        Series::E6 | Series::E12 | Series::E24 => (5.0, 200.0, 0.003),
        Series::E192 => (0.5, 50.0, 0.02),
        Series::E48 | Series::E96 => (1.0, 100.0, 0.005),
    }
}

/// The generic part of one series value: id `GEN-<series>-<value code>`
/// (`GEN-E96-4K99`), family `GEN-<series>`, package `generic`, unlimited.
pub fn generic_resistor(series: Series, ohms: f64) -> ResistorPart {
    let (tolerance, tcr, unit_cost) = generic_grade(series);
    ResistorPart {
        part_id: format!("GEN-{}-{}", series.name(), value_code(ohms)),
        value: Ohms(ohms),
        tolerance: Percent(tolerance),
        tcr: PpmPerC(tcr),
        package: "generic".into(),
        unit_cost,
        stock_qty: None,
        family: Some(format!("GEN-{}", series.name())),
    }
}

/// The generic part a `GEN-<series>-<value code>` id names, if it names
/// one (a value of that series inside [`GENERIC_RANGE_OHMS`]); so a design
/// solved with `stock.only = false` reads back without the need.
pub fn generic_resistor_by_id(id: &str) -> Option<ResistorPart> {
    let rest = id.strip_prefix("GEN-")?;
    let (series, code) = rest.split_once('-')?;
    let series = Series::from_name(series)?;
    let (min, max) = GENERIC_RANGE_OHMS;
    series
        .values_in(min, max)
        .into_iter()
        .find(|&v| value_code(v) == code)
        .map(|v| generic_resistor(series, v))
}

impl Stock {
    /// Look up an op-amp by part id.
    pub fn opamp(&self, id: &str) -> Option<&OpAmpPart> {
        self.opamps.iter().find(|p| p.part_id == id)
    }
    /// Look up a reference by part id.
    pub fn reference(&self, id: &str) -> Option<&ReferencePart> {
        self.references.iter().find(|p| p.part_id == id)
    }
    /// Look up an in-amp by part id.
    pub fn inamp(&self, id: &str) -> Option<&InAmpPart> {
        self.inamps.iter().find(|p| p.part_id == id)
    }
    /// Look up a capacitor by part id.
    pub fn capacitor(&self, id: &str) -> Option<&CapacitorPart> {
        self.capacitors.iter().find(|p| p.part_id == id)
    }
    /// Look up a resistor network by part id.
    pub fn network(&self, id: &str) -> Option<&NetworkPart> {
        self.networks.iter().find(|p| p.part_id == id)
    }
    /// Look up a resistor by part id.
    pub fn resistor(&self, id: &str) -> Option<&ResistorPart> {
        self.resistors.iter().find(|p| p.part_id == id)
    }
    /// Look up a resistor by part id among the parts of one value (the
    /// list is sorted by value, so this is a binary search, not a scan).
    pub fn resistor_valued(&self, id: &str, ohms: f64) -> Option<&ResistorPart> {
        let start = self.resistors.partition_point(|p| p.value.0 < ohms);
        self.resistors[start..]
            .iter()
            .take_while(|p| p.value.0 <= ohms)
            .find(|p| p.part_id == id)
    }
}
