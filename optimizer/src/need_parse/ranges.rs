//! The documented finite range of every number of a need, in one table
//! that validation and messages both read.

use super::short_number;

/// Absolute zero in degrees Celsius; no temperature may lie below it.
pub(super) const ABSOLUTE_ZERO_C: f64 = -273.15;

/// Most parts a design may be allowed to have.
pub(super) const MAX_PARTS_LIMIT: i128 = 10_000;

/// Longest search time that may be asked for, in milliseconds (one hour).
pub(super) const MAX_TIME_LIMIT_MS: i128 = 3_600_000;

/// Largest voltage magnitude any need key may hold, in volts. spanfit
/// designs low-voltage signal conditioning; this bound only keeps every
/// later product finite.
pub(super) const MAX_ABS_VOLTS: f64 = 1000.0;

/// Smallest sensor span `|signal_high_v - signal_low_v|`, in volts (1 uV).
pub(crate) const MIN_SENSOR_SPAN_V: f64 = 1e-6;

/// Smallest ADC window `adc.high_v - adc.low_v`, in volts (1 mV).
pub(crate) const MIN_ADC_SPAN_V: f64 = 1e-3;

/// Largest magnitude of `sensor.quantity_low` and `quantity_high`.
pub(super) const MAX_ABS_QUANTITY: f64 = 1e12;

/// Smallest `|quantity_high - quantity_low|`.
pub(super) const MIN_QUANTITY_SPAN: f64 = 1e-9;

/// The allowed range of one number of a need, both ends included.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) struct NumberRange {
    /// Key path (`adc.high_v`).
    pub key: &'static str,
    /// Smallest value allowed.
    pub min: f64,
    /// Largest value allowed.
    pub max: f64,
    /// The unit, as messages name it.
    pub unit: &'static str,
}

/// Every number a need may hold with its range (both ends included; a few
/// keys also refuse an end, as their own messages say: a margin under 50 %,
/// a supply tolerance and a yield under 100 %, an error bound and a
/// bandwidth above 0). Whole-number keys hold whole numbers only. A value
/// outside is refused with the key, its line and column and this range.
pub(crate) const NUMBER_RANGES: &[NumberRange] = &[
    NumberRange {
        key: "sensor.signal_low_v",
        min: -MAX_ABS_VOLTS,
        max: MAX_ABS_VOLTS,
        unit: "volts",
    },
    NumberRange {
        key: "sensor.signal_high_v",
        min: -MAX_ABS_VOLTS,
        max: MAX_ABS_VOLTS,
        unit: "volts",
    },
    NumberRange {
        key: "sensor.quantity_low",
        min: -MAX_ABS_QUANTITY,
        max: MAX_ABS_QUANTITY,
        unit: "the physical value at signal_low_v",
    },
    NumberRange {
        key: "sensor.quantity_high",
        min: -MAX_ABS_QUANTITY,
        max: MAX_ABS_QUANTITY,
        unit: "the physical value at signal_high_v",
    },
    NumberRange {
        key: "sensor.common_mode_v",
        min: -MAX_ABS_VOLTS,
        max: MAX_ABS_VOLTS,
        unit: "volts",
    },
    NumberRange {
        key: "sensor.source_ohms",
        min: 0.0,
        max: 1e9,
        unit: "ohms",
    },
    NumberRange {
        key: "sensor.source_tolerance_pct",
        min: 0.0,
        max: 100.0,
        unit: "percent",
    },
    NumberRange {
        key: "sensor.source_tempco_ppm_per_c",
        min: -100_000.0,
        max: 100_000.0,
        unit: "ppm/degC",
    },
    NumberRange {
        key: "sensor.common_mode_tolerance_pct",
        min: 0.0,
        max: 100.0,
        unit: "percent",
    },
    NumberRange {
        key: "adc.low_v",
        min: -MAX_ABS_VOLTS,
        max: MAX_ABS_VOLTS,
        unit: "volts",
    },
    NumberRange {
        key: "adc.high_v",
        min: -MAX_ABS_VOLTS,
        max: MAX_ABS_VOLTS,
        unit: "volts",
    },
    NumberRange {
        key: "adc.bits",
        min: 1.0,
        max: 32.0,
        unit: "bits of resolution",
    },
    NumberRange {
        key: "adc.margin_pct",
        min: 0.0,
        max: 50.0,
        unit: "percent",
    },
    NumberRange {
        key: "supply.positive_v",
        min: -MAX_ABS_VOLTS,
        max: MAX_ABS_VOLTS,
        unit: "volts",
    },
    NumberRange {
        key: "supply.negative_v",
        min: -MAX_ABS_VOLTS,
        max: MAX_ABS_VOLTS,
        unit: "volts",
    },
    NumberRange {
        key: "supply.tolerance_pct",
        min: 0.0,
        max: 100.0,
        unit: "percent",
    },
    NumberRange {
        key: "accuracy.max_error_pct_fs",
        min: 1e-6,
        max: 100.0,
        unit: "percent of full scale",
    },
    NumberRange {
        key: "accuracy.yield_pct",
        min: 0.0,
        max: 100.0,
        unit: "percent",
    },
    NumberRange {
        key: "adc.sample_rate_hz",
        min: 1e-3,
        max: 1e10,
        unit: "hertz",
    },
    NumberRange {
        key: "adc.alias_rejection_db",
        min: 0.0,
        max: 200.0,
        unit: "decibels",
    },
    NumberRange {
        key: "adc.sample_capacitance_pf",
        min: 1e-3,
        max: 1e6,
        unit: "picofarads",
    },
    NumberRange {
        key: "adc.acquisition_time_ns",
        min: 1e-3,
        max: 1e12,
        unit: "nanoseconds",
    },
    NumberRange {
        key: "accuracy.temp_min_c",
        min: ABSOLUTE_ZERO_C,
        max: 1000.0,
        unit: "degrees Celsius",
    },
    NumberRange {
        key: "accuracy.temp_max_c",
        min: ABSOLUTE_ZERO_C,
        max: 1000.0,
        unit: "degrees Celsius",
    },
    NumberRange {
        key: "accuracy.bandwidth_hz",
        min: 1e-6,
        max: 1e9,
        unit: "hertz",
    },
    NumberRange {
        key: "accuracy.noise_low_hz",
        min: 1e-9,
        max: 1e6,
        unit: "hertz",
    },
    NumberRange {
        key: "search.max_stages",
        min: 1.0,
        max: 3.0,
        unit: "stages",
    },
    NumberRange {
        key: "search.bom_line_cost",
        min: 0.0,
        max: 1e6,
        unit: "cost per distinct BOM line",
    },
    NumberRange {
        key: "search.max_parts",
        min: 1.0,
        max: MAX_PARTS_LIMIT as f64,
        unit: "parts",
    },
    NumberRange {
        key: "search.time_limit_ms",
        min: 1.0,
        max: MAX_TIME_LIMIT_MS as f64,
        unit: "milliseconds",
    },
];

/// The range of a key path, if it holds a number.
pub(crate) fn number_range(key: &str) -> Option<&'static NumberRange> {
    NUMBER_RANGES.iter().find(|r| r.key == key)
}

impl NumberRange {
    /// "volts from -1000 to 1000", for messages.
    pub(crate) fn describe(&self) -> String {
        format!(
            "{} from {} to {}",
            self.unit,
            short_number(self.min),
            short_number(self.max)
        )
    }
}
