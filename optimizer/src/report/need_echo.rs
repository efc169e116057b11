//! The need as the run read it, every default applied, written back in the
//! need file's own tables and keys (`need.sensor`, `need.adc`, ... in the
//! report), so a reader sees every value the run used, including those the
//! need file left out, and the tables read back as a need file.

use crate::need::Need;
use serde_json::{json, Map, Value};

/// One table of the echo, from `(key, value)` pairs; `None` values (keys
/// that do not apply) are left out.
fn table(entries: Vec<(&str, Option<Value>)>) -> Value {
    let mut map = Map::new();
    for (key, value) in entries {
        if let Some(value) = value {
            map.insert(key.to_string(), value);
        }
    }
    Value::Object(map)
}

/// The need's six tables (`sensor`, `adc`, `supply`, `accuracy`, `search`,
/// `stock`) with every default applied, in need-file keys and units.
pub fn need_tables(need: &Need) -> [Value; 6] {
    let s = &need.sensor;
    let differential = s.output == crate::need::SensorOutput::Differential;
    let sensor = table(vec![
        ("label", Some(json!(s.label))),
        ("signal_low_v", Some(json!(s.signal_low.0))),
        ("signal_high_v", Some(json!(s.signal_high.0))),
        ("quantity_low", s.quantity.as_ref().map(|q| json!(q.low))),
        ("quantity_high", s.quantity.as_ref().map(|q| json!(q.high))),
        ("quantity_unit", s.quantity.as_ref().map(|q| json!(q.unit))),
        ("output", Some(json!(s.output.name()))),
        (
            "common_mode_v",
            differential.then(|| json!(s.common_mode.0)),
        ),
        ("source_ohms", Some(json!(s.source.0))),
        ("source_tolerance_pct", Some(json!(s.source_tolerance.0))),
        ("source_tempco_ppm_per_c", Some(json!(s.source_tempco.0))),
        ("excitation", Some(json!(s.excitation.name()))),
        (
            "common_mode_tolerance_pct",
            (differential && s.excitation == crate::need::Excitation::Independent)
                .then(|| json!(s.common_mode_tolerance.0)),
        ),
    ]);
    let a = &need.adc;
    let adc = table(vec![
        ("low_v", Some(json!(a.low.0))),
        ("high_v", Some(json!(a.high.0))),
        ("bits", Some(json!(a.bits))),
        ("margin_pct", Some(json!(a.margin.0))),
        ("sample_rate_hz", a.sample_rate.map(|v| json!(v.0))),
        ("alias_rejection_db", a.alias_rejection.map(|v| json!(v.0))),
        (
            "sample_capacitance_pf",
            a.sample_capacitance.map(|v| json!(v.0 / 1e-12)),
        ),
        (
            "acquisition_time_ns",
            a.acquisition_time.map(|v| json!(v.0 / 1e-9)),
        ),
    ]);
    let p = &need.supply;
    let supply = table(vec![
        ("positive_v", Some(json!(p.positive.0))),
        ("negative_v", Some(json!(p.negative.0))),
        ("tolerance_pct", Some(json!(p.tolerance.0))),
        ("ratiometric", Some(json!(p.ratiometric))),
    ]);
    let c = &need.accuracy;
    let accuracy = table(vec![
        ("max_error_pct_fs", Some(json!(c.max_error_pct_fs))),
        ("basis", Some(json!(c.basis.name()))),
        ("yield_pct", Some(json!(c.yield_pct))),
        ("temp_min_c", Some(json!(c.temp_min.0))),
        ("temp_max_c", Some(json!(c.temp_max.0))),
        ("calibration", Some(json!(c.calibration.name()))),
        ("bandwidth_hz", Some(json!(c.bandwidth.0))),
        ("noise_low_hz", Some(json!(c.noise_low.0))),
    ]);
    let o = &need.search;
    let search = table(vec![
        ("max_stages", Some(json!(o.max_stages))),
        (
            "topologies",
            Some(json!(o
                .topologies
                .iter()
                .map(|t| t.name())
                .collect::<Vec<_>>())),
        ),
        (
            "resistor_series",
            Some(json!(o
                .resistor_series
                .iter()
                .map(|s| s.name())
                .collect::<Vec<_>>())),
        ),
        ("objective", Some(json!(o.objective.name()))),
        ("bom_line_cost", Some(json!(o.bom_line_cost))),
        ("max_parts", Some(json!(o.max_parts))),
        ("time_limit_ms", Some(json!(o.time_limit_ms))),
    ]);
    let stock = table(vec![
        ("path", need.stock.path.as_ref().map(|p| json!(p))),
        ("only", Some(json!(need.stock.only))),
    ]);
    [sensor, adc, supply, accuracy, search, stock]
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The echo reads back as a need file (JSON) and gives the same need,
    /// for the demo and for a need that sets every optional key.
    #[test]
    fn the_echo_reads_back_as_the_same_need() {
        let full = crate::demo::NEED_TOML.to_string();
        let with_filter_keys = full.replacen(
            "[adc]",
            "[adc]\nsample_rate_hz = 2000\nalias_rejection_db = 30\n\
             sample_capacitance_pf = 12\nacquisition_time_ns = 800",
            1,
        );
        assert_ne!(with_filter_keys, full, "the demo need has an [adc] table");
        let supply_excited =
            full.replacen("excitation = \"independent\"", "excitation = \"supply\"", 1);
        assert_ne!(supply_excited, full, "the demo need sets sensor.excitation");
        let common_mode_given =
            full.replacen("[sensor]", "[sensor]\ncommon_mode_tolerance_pct = 0.5", 1);
        for text in [full, with_filter_keys, supply_excited, common_mode_given] {
            let need = crate::need::parse_need(text.as_bytes(), "need.toml").unwrap();
            let [sensor, adc, supply, accuracy, search, stock] = need_tables(&need);
            let echo = json!({
                "sensor": sensor, "adc": adc, "supply": supply,
                "accuracy": accuracy, "search": search, "stock": stock,
            });
            let again = crate::need::parse_need(echo.to_string().as_bytes(), "echo.json").unwrap();
            assert_eq!(again, need, "echo: {echo}");
        }
    }
}
