//! The need: what the user asks for (sensor, ADC, supplies, accuracy,
//! search limits, stock location). Raw serde structs mirror the TOML/JSON
//! keys of `docs/need.md` exactly; [`parse_need`] validates them into
//! [`Need`], whose fields carry unit types.

use crate::error::Result;
use crate::series::Series;
use crate::units::{Celsius, Decibels, Farads, Hertz, Ohms, Percent, PpmPerC, Seconds, Volts};
use serde::{Deserialize, Serialize};

/// How the sensor presents its signal.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum SensorOutput {
    /// One signal node against ground.
    SingleEnded,
    /// Two nodes, signal between them, riding on a common-mode voltage.
    Differential,
}

impl SensorOutput {
    /// Every value, in a fixed order.
    pub const ALL: [SensorOutput; 2] = [SensorOutput::SingleEnded, SensorOutput::Differential];

    /// The name used in need files and reports.
    pub fn name(self) -> &'static str {
        match self {
            SensorOutput::SingleEnded => "single-ended",
            SensorOutput::Differential => "differential",
        }
    }
}

/// What powers the sensor's output.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum Excitation {
    /// Its own source: the signal and the common mode do not follow the
    /// supply.
    #[default]
    Independent,
    /// The positive supply: the signal and the common mode scale with
    /// `supply.positive_v` (the values are given at the nominal rail).
    Supply,
}

impl Excitation {
    /// Every value, in a fixed order.
    pub const ALL: [Excitation; 2] = [Excitation::Independent, Excitation::Supply];

    /// The name used in need files and reports.
    pub fn name(self) -> &'static str {
        match self {
            Excitation::Independent => "independent",
            Excitation::Supply => "supply",
        }
    }
}

/// Tolerance of an independently excited differential sensor's common
/// mode when the need does not give one, in % of `common_mode_v` (our
/// rule, conservative: a bridge's common mode is set by its excitation and
/// the balance of its arms, neither of which is a reference).
pub const DEFAULT_COMMON_MODE_TOLERANCE_PCT: f64 = 5.0;

/// The optional physical scale of the sensor.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Quantity {
    /// Physical value at `signal_low_v`.
    pub low: f64,
    /// Physical value at `signal_high_v`.
    pub high: f64,
    /// Its unit, as the user wrote it (shown as text, never markup).
    pub unit: String,
}

/// The transducer.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Sensor {
    /// Free text label.
    pub label: String,
    /// Sensor output at the bottom of its range.
    pub signal_low: Volts,
    /// Sensor output at the top of its range.
    pub signal_high: Volts,
    /// Physical scale, where given.
    pub quantity: Option<Quantity>,
    /// Single-ended or differential.
    pub output: SensorOutput,
    /// Common-mode voltage of a differential sensor (0 for single-ended).
    pub common_mode: Volts,
    /// Resistance between the sensor's output terminals: a single-ended
    /// sensor's output resistance; a differential sensor has half of it in
    /// each leg ([`Sensor::leg_ohms`]).
    pub source: Ohms,
    /// Tolerance of that resistance (0: exact).
    #[serde(default)]
    pub source_tolerance: Percent,
    /// Temperature coefficient of that resistance (0: none).
    #[serde(default)]
    pub source_tempco: PpmPerC,
    /// What excites the sensor (`sensor.excitation`).
    #[serde(default)]
    pub excitation: Excitation,
    /// Tolerance of the common mode of a differential sensor with its own
    /// excitation, in % of `common_mode` (`sensor.common_mode_tolerance_pct`);
    /// 0 where it does not apply (single-ended, or excited by the supply,
    /// whose tolerance its common mode then carries).
    #[serde(default)]
    pub common_mode_tolerance: Percent,
}

impl Sensor {
    /// The sensor's resistance in its (+, -) legs: a differential sensor
    /// has half of `source` in each, a single-ended one all of it in the
    /// signal leg.
    pub fn leg_ohms(&self) -> (f64, f64) {
        match self.output {
            SensorOutput::Differential => (0.5 * self.source.0, 0.5 * self.source.0),
            SensorOutput::SingleEnded => (self.source.0, 0.0),
        }
    }
}

/// The converter the front end drives.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Adc {
    /// Bottom of the input window.
    pub low: Volts,
    /// Top of the input window.
    pub high: Volts,
    /// Resolution in bits.
    pub bits: u32,
    /// Span kept free at each end of the window.
    pub margin: Percent,
    /// Sample rate (`adc.sample_rate_hz`), if given: the filter's
    /// rejection at half of it is reported.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub sample_rate: Option<Hertz>,
    /// Wanted rejection at half the sample rate (`adc.alias_rejection_db`),
    /// if given; a check of the filter.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub alias_rejection: Option<Decibels>,
    /// Sampling capacitance of a switched-capacitor input
    /// (`adc.sample_capacitance_pf`), if given (with the acquisition time).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub sample_capacitance: Option<Farads>,
    /// Acquisition time of a switched-capacitor input
    /// (`adc.acquisition_time_ns`), if given (with the capacitance).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub acquisition_time: Option<Seconds>,
}

/// The supply rails.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Supply {
    /// Positive rail.
    pub positive: Volts,
    /// Negative rail (0 for a single supply).
    pub negative: Volts,
    /// Tolerance of the positive rail, when it serves as the reference.
    pub tolerance: Percent,
    /// The ADC reference is this same supply.
    pub ratiometric: bool,
}

/// Which error total must meet the target.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum Basis {
    /// Nominal error plus the sum of every contributor at its limit.
    WorstCase,
    /// Systematic part plus the root-sum-square of the random ones.
    Rss,
    /// Monte Carlo fraction of builds inside the target.
    Yield,
}

impl Basis {
    /// Every value, in a fixed order.
    pub const ALL: [Basis; 3] = [Basis::WorstCase, Basis::Rss, Basis::Yield];

    /// The name used in need files and reports.
    pub fn name(self) -> &'static str {
        match self {
            Basis::WorstCase => "worst-case",
            Basis::Rss => "rss",
            Basis::Yield => "yield",
        }
    }
}

/// Which calibration the user will do on the finished board.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum Calibration {
    /// None.
    None,
    /// One-point trim that removes the initial offset.
    Offset,
    /// Two-point trim that removes initial gain and offset.
    TwoPoint,
}

impl Calibration {
    /// Every value, in a fixed order.
    pub const ALL: [Calibration; 3] = [
        Calibration::None,
        Calibration::Offset,
        Calibration::TwoPoint,
    ];

    /// The name used in need files and reports.
    pub fn name(self) -> &'static str {
        match self {
            Calibration::None => "none",
            Calibration::Offset => "offset",
            Calibration::TwoPoint => "two-point",
        }
    }
}

/// Accuracy target and conditions.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Accuracy {
    /// Error bound in % of the ADC full-scale span.
    pub max_error_pct_fs: f64,
    /// Which total is bound.
    pub basis: Basis,
    /// Required yield for `basis = yield`, in %.
    pub yield_pct: f64,
    /// Lowest operating temperature.
    pub temp_min: Celsius,
    /// Highest operating temperature.
    pub temp_max: Celsius,
    /// Calibration done after assembly.
    pub calibration: Calibration,
    /// Signal bandwidth (noise bandwidth and gain-bandwidth check).
    pub bandwidth: Hertz,
    /// Lowest frequency the noise line counts (`noise_low_hz`): slower
    /// changes are drift, seen over the measurement's own time scale.
    pub noise_low: Hertz,
    /// Width of the temperature range a reference's box-method tempco
    /// covers, degC, when it is not `temp_max - temp_min`: an analysis at
    /// one temperature of a wider range (the error-over-temperature sweep)
    /// keeps the box of the whole range. Not a need key.
    #[serde(skip)]
    pub reference_box_c: Option<f64>,
    /// The target, % FS, the ADC filter's droop and corner rules are drawn
    /// from, when it is not `max_error_pct_fs`: the search for the most
    /// accurate design of an infeasible need loosens the target but keeps
    /// the filter the need itself would get. Not a need key.
    #[serde(skip)]
    pub filter_target_pct_fs: Option<f64>,
}

impl Accuracy {
    /// The target, % FS, the ADC filter's rules are drawn from.
    pub fn filter_target_pct_fs(&self) -> f64 {
        self.filter_target_pct_fs.unwrap_or(self.max_error_pct_fs)
    }
}

/// Topology families (trade names).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum Topology {
    /// Non-inverting gain stages.
    NonInverting,
    /// Inverting summing stages.
    Inverting,
    /// Four-resistor difference amplifier.
    Difference,
    /// Three-op-amp or integrated instrumentation amplifier.
    Instrumentation,
}

impl Topology {
    /// Every topology, in a fixed order.
    pub const ALL: [Topology; 4] = [
        Topology::NonInverting,
        Topology::Inverting,
        Topology::Difference,
        Topology::Instrumentation,
    ];

    /// The trade name used in specs and reports.
    pub fn name(self) -> &'static str {
        match self {
            Topology::NonInverting => "non-inverting",
            Topology::Inverting => "inverting",
            Topology::Difference => "difference",
            Topology::Instrumentation => "instrumentation",
        }
    }
}

/// What the search minimises.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum Objective {
    /// Total cost (parts plus one fee per distinct BOM line).
    Cost,
    /// Error on the chosen basis.
    Error,
    /// Part count.
    Parts,
}

impl Objective {
    /// Every value, in a fixed order.
    pub const ALL: [Objective; 3] = [Objective::Cost, Objective::Error, Objective::Parts];

    /// The name used in need files and reports.
    pub fn name(self) -> &'static str {
        match self {
            Objective::Cost => "cost",
            Objective::Error => "error",
            Objective::Parts => "parts",
        }
    }
}

/// Search limits and preferences.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct SearchOptions {
    /// At most this many stages (1 to 3).
    pub max_stages: usize,
    /// Topologies allowed.
    pub topologies: Vec<Topology>,
    /// Standard series used where stock does not restrict values.
    pub resistor_series: Vec<Series>,
    /// What to minimise.
    pub objective: Objective,
    /// Cost added once per distinct part number.
    pub bom_line_cost: f64,
    /// Most parts allowed in a design.
    pub max_parts: usize,
    /// Time budget for the search in milliseconds.
    pub time_limit_ms: u64,
}

/// Where the stock comes from.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct StockSource {
    /// Folder of stock CSVs, relative to the need file (CLI only; the page
    /// supplies its stock itself). `None` means the embedded demo stock.
    pub path: Option<String>,
    /// Use nothing that is not in stock.
    pub only: bool,
}

/// A validated need.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Need {
    /// The transducer.
    pub sensor: Sensor,
    /// The converter.
    pub adc: Adc,
    /// The rails.
    pub supply: Supply,
    /// The accuracy target.
    pub accuracy: Accuracy,
    /// Search limits.
    pub search: SearchOptions,
    /// Stock location.
    pub stock: StockSource,
}

impl Need {
    /// The ADC full-scale span in volts (`adc.high - adc.low`).
    pub fn full_scale(&self) -> f64 {
        self.adc.high.0 - self.adc.low.0
    }

    /// The target output window `[Vlo, Vhi]`, the ADC window less the margin
    /// at each end.
    pub fn target_window(&self) -> (f64, f64) {
        let m = self.adc.margin.fraction() * self.full_scale();
        (self.adc.low.0 + m, self.adc.high.0 - m)
    }

    /// Ideal gain `K` and offset `B` (`docs/need.md`, "What the reader derives").
    pub fn ideal_transfer(&self) -> (f64, f64) {
        let (vlo, vhi) = self.target_window();
        let k = (vhi - vlo) / (self.sensor.signal_high.0 - self.sensor.signal_low.0);
        (k, vlo - k * self.sensor.signal_low.0)
    }

    /// The ideal output at the low and high ends of the sensor's span,
    /// volts (`K * Vsensor + B` at each end).
    pub fn ideal_outputs(&self) -> [f64; 2] {
        let (k, b) = self.ideal_transfer();
        [
            k * self.sensor.signal_low.0 + b,
            k * self.sensor.signal_high.0 + b,
        ]
    }

    /// One LSB in volts.
    pub fn lsb(&self) -> f64 {
        self.full_scale() / 2f64.powi(self.adc.bits as i32)
    }

    /// Volts at the ADC per unit of the physical quantity, where given.
    pub fn volts_per_unit(&self) -> Option<f64> {
        let q = self.sensor.quantity.as_ref()?;
        let (k, _) = self.ideal_transfer();
        let sensor_span = self.sensor.signal_high.0 - self.sensor.signal_low.0;
        let q_span = q.high - q.low;
        if q_span == 0.0 {
            return None;
        }
        Some(k * sensor_span / q_span)
    }

    /// The largest temperature excursion from 25 degC in the range.
    pub fn max_delta_t(&self) -> f64 {
        (self.accuracy.temp_max.0 - 25.0)
            .abs()
            .max((self.accuracy.temp_min.0 - 25.0).abs())
    }
}

/// Parse and validate a need from TOML or JSON bytes. `file` names the
/// source in messages; JSON is recognised by a leading `{`.
pub fn parse_need(bytes: &[u8], file: &str) -> Result<Need> {
    crate::need_parse::parse_need(bytes, file)
}
