//! The page's gallery: invented example needs (`examples/gallery/`), each
//! with the shelf it is meant to be solved against, so that picking one
//! loads the need and the shelf together.

use serde::Serialize;

/// One example of the gallery.
#[derive(Debug, Clone, Serialize)]
pub struct Example {
    /// A short name, unique in the gallery.
    pub id: &'static str,
    /// The title shown on the page.
    pub title: &'static str,
    /// One or two sentences on the scenario.
    pub summary: &'static str,
    /// The need file (TOML).
    pub need: &'static str,
    /// The shelf: file name and CSV text of each stock table.
    pub stock: Vec<(&'static str, &'static str)>,
}

const ELECTRODE_SHELF: [(&str, &str); 4] = [
    (
        "resistors.csv",
        include_str!("../../examples/gallery/electrode-shelf/resistors.csv"),
    ),
    (
        "opamps.csv",
        include_str!("../../examples/gallery/electrode-shelf/opamps.csv"),
    ),
    (
        "references.csv",
        include_str!("../../examples/gallery/electrode-shelf/references.csv"),
    ),
    (
        "inamps.csv",
        include_str!("../../examples/gallery/electrode-shelf/inamps.csv"),
    ),
];

/// Every example, in the order the page lists them. All are invented.
pub fn examples() -> Vec<Example> {
    let demo: Vec<(&'static str, &'static str)> = spanfit::demo::STOCK.to_vec();
    vec![
        Example {
            id: "bridge-single-supply",
            title: "Load-cell bridge on a single 3.3 V supply",
            summary: "A 0-20 mV differential bridge under a hopper, 12-bit ADC, offset trimmed.",
            need: include_str!("../../examples/gallery/bridge-single-supply.toml"),
            stock: demo.clone(),
        },
        Example {
            id: "ratiometric-bridge",
            title: "Ratiometric bridge excited from the supply",
            summary: "A pressure bridge on the 5 V rail that is also the ADC's reference: its signal, its common mode and the ADC scale all follow the rail, so an offset from the rail cancels the rail's 5 % tolerance.",
            need: include_str!("../../examples/gallery/ratiometric-bridge.toml"),
            stock: demo.clone(),
        },
        Example {
            id: "thermocouple-cjc",
            title: "Thermocouple after cold-junction compensation",
            summary: "0-41 mV single-ended over 0-1000 degC into a 16-bit ADC.",
            need: include_str!("../../examples/gallery/thermocouple-cjc.toml"),
            stock: demo.clone(),
        },
        Example {
            id: "loop-current-shunt",
            title: "4-20 mA loop across a 100 ohm shunt",
            summary: "0.4-2.0 V stretched onto a 0-3.3 V, 12-bit ADC window.",
            need: include_str!("../../examples/gallery/loop-current-shunt.toml"),
            stock: demo.clone(),
        },
        Example {
            id: "bipolar-shunt",
            title: "Bipolar current shunt centred at mid scale",
            summary: "-50 to +50 mV of battery current onto a single-supply ADC, zero at mid scale.",
            need: include_str!("../../examples/gallery/bipolar-shunt.toml"),
            stock: demo,
        },
        Example {
            id: "electrode-falling",
            title: "High-impedance electrode whose output falls as pH rises",
            summary: "A 200 Mohm pH electrode on +/-5 V, with its own shelf holding an electrometer-grade op-amp.",
            need: include_str!("../../examples/gallery/electrode-falling.toml"),
            stock: ELECTRODE_SHELF.to_vec(),
        },
    ]
}

/// The gallery as JSON text: `[{id, title, summary, need, stock}]`, where
/// `stock` maps file names to CSV text.
pub fn gallery_text() -> String {
    let list: Vec<serde_json::Value> = examples()
        .into_iter()
        .map(|e| {
            let stock: serde_json::Map<String, serde_json::Value> = e
                .stock
                .iter()
                .map(|(name, text)| ((*name).to_string(), serde_json::Value::from(*text)))
                .collect();
            serde_json::json!({
                "id": e.id, "title": e.title, "summary": e.summary,
                "need": e.need, "stock": stock, "invented": true,
            })
        })
        .collect();
    serde_json::Value::Array(list).to_string()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn every_example_reads_and_says_it_is_invented() {
        let list = examples();
        assert!(list.len() >= 6);
        for e in &list {
            assert!(e.need.contains("INVENTED"), "{}", e.id);
            let files: Vec<spanfit::stock::StockFile> = e
                .stock
                .iter()
                .map(|(name, text)| spanfit::stock::StockFile {
                    name: (*name).to_string(),
                    bytes: text.as_bytes().to_vec(),
                })
                .collect();
            spanfit::api::load(e.need.as_bytes(), e.id, &files)
                .unwrap_or_else(|err| panic!("{}: {err}", e.id));
        }
        let text: serde_json::Value = serde_json::from_str(&gallery_text()).unwrap();
        assert_eq!(text.as_array().unwrap().len(), list.len());
    }
}
