//! Unit types. Inside the core every physical quantity travels in one of
//! these wrappers, so an ohm value cannot be passed where volts belong.
//! Each wraps an `f64` in SI base units (ohms, volts, amps, hertz) or the
//! trade's customary unit where it says so (ppm per degree, percent,
//! degrees Celsius).

use serde::{Deserialize, Serialize};

macro_rules! unit {
    ($(#[$meta:meta])* $name:ident, $suffix:literal) => {
        $(#[$meta])*
        #[derive(Debug, Clone, Copy, PartialEq, PartialOrd, Default, Serialize, Deserialize)]
        #[serde(transparent)]
        pub struct $name(pub f64);

        impl $name {
            /// The bare number in this unit.
            #[inline]
            pub fn get(self) -> f64 {
                self.0
            }
        }

        impl std::fmt::Display for $name {
            fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
                write!(f, "{} {}", self.0, $suffix)
            }
        }
    };
}

unit!(
    /// Resistance in ohms.
    Ohms,
    "ohm"
);
unit!(
    /// Capacitance in farads.
    Farads,
    "F"
);
unit!(
    /// Potential in volts.
    Volts,
    "V"
);
unit!(
    /// Current in amps.
    Amps,
    "A"
);
unit!(
    /// Frequency in hertz.
    Hertz,
    "Hz"
);
unit!(
    /// Time in seconds.
    Seconds,
    "s"
);
unit!(
    /// Temperature in degrees Celsius.
    Celsius,
    "degC"
);
unit!(
    /// A ratio in percent (1 % = 0.01).
    Percent,
    "%"
);
unit!(
    /// Parts per million per degree Celsius (a temperature coefficient).
    PpmPerC,
    "ppm/degC"
);
unit!(
    /// A ratio in decibels (20 log10 of a voltage ratio).
    Decibels,
    "dB"
);

impl Percent {
    /// As a plain fraction (1 % becomes 0.01).
    #[inline]
    pub fn fraction(self) -> f64 {
        self.0 / 100.0
    }
}

impl PpmPerC {
    /// As a plain fraction per degree (1 ppm/degC becomes 1e-6).
    #[inline]
    pub fn fraction_per_c(self) -> f64 {
        self.0 * 1e-6
    }
}

impl Decibels {
    /// The voltage ratio this level stands for (`10^(dB/20)`).
    #[inline]
    pub fn ratio(self) -> f64 {
        10f64.powf(self.0 / 20.0)
    }
}

/// Boltzmann constant in J/K (CODATA 2018, exact by the 2019 SI definition).
pub const BOLTZMANN_J_PER_K: f64 = 1.380_649e-23;

/// Zero degrees Celsius in kelvin.
pub const ZERO_CELSIUS_K: f64 = 273.15;

/// Ratio of peak-to-peak to RMS for Gaussian noise used in budgets
/// (6.6 sigma, exceeded about 0.1 % of the time; common practice).
pub const PEAK_TO_PEAK_PER_RMS: f64 = 6.6;

/// Johnson (thermal) noise voltage density of a resistance, in V/sqrt(Hz):
/// `sqrt(4 k T R)`.
pub fn johnson_noise_density(r: Ohms, t: Celsius) -> f64 {
    (4.0 * BOLTZMANN_J_PER_K * (t.0 + ZERO_CELSIUS_K) * r.0).sqrt()
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Johnson noise of 1 kohm at 25 degC over 1 Hz is about 4.06 nV RMS
    /// (`sqrt(4kTR)` with k from CODATA 2018; the figure is common practice).
    #[test]
    fn johnson_noise_of_one_kilohm() {
        let v = johnson_noise_density(Ohms(1000.0), Celsius(25.0));
        assert!((v - 4.06e-9).abs() < 0.01e-9, "got {v}");
    }

    #[test]
    fn decibels_to_ratio() {
        assert!((Decibels(100.0).ratio() - 1e5).abs() < 1e-6);
        assert!((Percent(1.0).fraction() - 0.01).abs() < 1e-15);
    }
}
