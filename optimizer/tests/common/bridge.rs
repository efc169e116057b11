//! The invented bridge of the network tests (no real product): a 0 to
//! 15 mV bridge at a 2.5 V common mode into 0.5 to 2.0 V of a 0 to 2.5 V
//! ADC (gain 100, offset 0.5 V), one stage on split 5 V rails with an
//! offset trim, over 25 to 65 degC; its stock's discrete 0.1 %,
//! 25 ppm/degC rows cannot hold the common mode's error through their
//! TCR at 0.2 % FS, and a package whose elements track to 2 ppm/degC can.

use spanfit::stock::StockFile;

/// Invented discrete resistors: a 1 % row for the filter, and 0.1 %,
/// 25 ppm/degC rows giving the stage's ratio (1 k / 100 k) and the offset
/// divider's (4 k over 1 k).
pub const RESISTORS_CSV: &str = "part_id,value_ohms,series,min_ohms,max_ohms,tolerance_pct,\
tcr_ppm_per_c,package,unit_cost,stock_qty\n\
Z-F1,,E6,1000,1000,1.0,100,0603,0.003,\n\
Z-P1K00,1000,,,,0.1,25,0603,0.04,\n\
Z-P4K00,4000,,,,0.1,25,0603,0.04,\n\
Z-P100K,100000,,,,0.1,25,0603,0.04,\n";

pub const OPAMPS_CSV: &str = "part_id,channels,supply_min_v,supply_max_v,input_headroom_low_v,\
input_headroom_high_v,output_headroom_low_v,output_headroom_high_v,vos_max_uv,\
vos_drift_uv_per_c,ib_max_na,ios_max_na,aol_min_db,gbw_mhz,en_nv_rthz,in_pa_rthz,cmrr_min_db,\
unit_cost,stock_qty\n\
Z-OA1,1,2.7,12,0,0,0.02,0.02,10,0.05,0.1,0.1,120,2,20,0.1,120,0.40,\n";

pub const REFERENCES_CSV: &str = "part_id,volts,initial_pct,tempco_ppm_per_c,dropout_v,\
noise_uv_pp,unit_cost,stock_qty\n\
Z-REF,2.5,0.1,20,0.2,10,0.30,\n";

pub const CAPACITORS_CSV: &str = "part_id,value_farads,series,min_farads,max_farads,tolerance_pct,\
tempco_ppm_per_c,dielectric,rated_v,package,unit_cost,stock_qty\n\
Z-C,,E6,1e-9,1e-6,10,1500,X7R,25,0603,0.004,\n";

pub const NETWORKS_HEADER: &str = "part_id,count,value_ohms,abs_tolerance_pct,ratio_tolerance_pct,\
abs_tcr_ppm_per_c,tracking_tcr_ppm_per_c,package,unit_cost,stock_qty\n";

/// The package that serves: 1 k and 100 k, two of each, tracking to
/// 2 ppm/degC.
pub const SERVES: &str = "RN-T1K-100K,4,1000;100000;1000;100000,0.1,0.01,25,2,SOIC-8,0.30,50\n";
/// Cheaper, but its ratio (120) is 20 % off the stage's gain of 100.
pub const WRONG_RATIO: &str =
    "RN-T1K-120K,4,1000;120000;1000;120000,0.1,0.01,25,2,SOIC-8,0.10,50\n";
/// Cheaper and better matched, but none on the shelf.
pub const NOT_ON_SHELF: &str =
    "RN-Z1K-100K,4,1000;100000;1000;100000,0.1,0.005,25,1,SOIC-8,0.05,0\n";

/// The invented need at `target` % FS with one stage of `topology`, for
/// `objective`, as need text.
pub fn need_text_with(target: f64, topology: &str, objective: &str) -> String {
    format!(
        "[sensor]\nlabel = \"invented bridge\"\nsignal_low_v = 0.0\nsignal_high_v = 0.015\n\
         output = \"differential\"\ncommon_mode_v = 2.5\nsource_ohms = 0.0\n\
         [adc]\nlow_v = 0.0\nhigh_v = 2.5\nbits = 16\nmargin_pct = 20.0\n\
         [supply]\npositive_v = 5.0\nnegative_v = -5.0\ntolerance_pct = 0.0\n\
         [accuracy]\nmax_error_pct_fs = {target}\ncalibration = \"offset\"\n\
         temp_min_c = 25.0\ntemp_max_c = 65.0\n\
         [search]\nmax_stages = 1\ntopologies = [\"{topology}\"]\nobjective = \"{objective}\"\n\
         [stock]\nonly = true\n"
    )
}

/// The invented stock's files: `resistors` as the resistor table, the
/// op-amp and reference tables, the capacitor table where `capacitors`
/// (without it no filter pair is placed), and `networks` as the rows of
/// the networks table (none: no table).
pub fn files_with(resistors: &str, networks: &[&str], capacitors: bool) -> Vec<StockFile> {
    let f = |name: &str, text: String| StockFile {
        name: name.into(),
        bytes: text.into_bytes(),
    };
    let mut files = vec![
        f("resistors.csv", resistors.into()),
        f("opamps.csv", OPAMPS_CSV.into()),
        f("references.csv", REFERENCES_CSV.into()),
    ];
    if capacitors {
        files.push(f("capacitors.csv", CAPACITORS_CSV.into()));
    }
    if !networks.is_empty() {
        files.push(f(
            "networks.csv",
            format!("{NETWORKS_HEADER}{}", networks.concat()),
        ));
    }
    files
}
