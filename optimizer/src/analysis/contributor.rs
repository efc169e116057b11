//! The error contributors: one variant per line of the budget, with the
//! label reports show and whether it is systematic or random.
//!
//! A new error source is a new variant here (label and report position),
//! a parameter in `params.rs` (or a term in `systematic.rs`), and a line in
//! `docs/error-budget.md`.

use serde::Serialize;

/// The kinds of error contributor; each is one line of the budget.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum Contributor {
    /// Nominal gain and offset after rounding to real values.
    NominalRounding,
    /// Finite open-loop gain of the op-amps (at their minimum).
    OpenLoopGain,
    /// Resistor initial tolerance.
    ResistorTolerance,
    /// Resistor TCR over the temperature range.
    ResistorTcr,
    /// Op-amp input offset times noise gain.
    OffsetVoltage,
    /// Offset drift over temperature.
    OffsetDrift,
    /// Bias current through the network resistances.
    BiasCurrent,
    /// Offset current (the unbalanced part).
    OffsetCurrent,
    /// Common-mode rejection.
    Cmrr,
    /// Reference initial accuracy.
    ReferenceInitial,
    /// Reference tempco.
    ReferenceTempco,
    /// Reference load regulation: its output moved by the current the
    /// network it drives draws.
    ReferenceLoad,
    /// Supply tolerance (where the supply sets offset or ADC scale).
    SupplyTolerance,
    /// Finite supply rejection: the supply's tolerance over each section's
    /// PSRR, as an input offset.
    Psrr,
    /// In-amp gain error.
    InAmpGainError,
    /// In-amp gain drift.
    InAmpGainDrift,
    /// In-amp output offset.
    InAmpOutputOffset,
    /// The sensor's own resistance: its tolerance and tempco.
    SourceResistance,
    /// Gain droop at the signal bandwidth (the chain's poles and the
    /// filter at the ADC input), as an error at the top of the span.
    Droop,
    /// Noise over the bandwidth, as the peak (half of 6.6-sigma p-p).
    Noise,
}

impl Contributor {
    /// Every contributor in report order.
    pub const ALL: [Contributor; 20] = [
        Contributor::NominalRounding,
        Contributor::OpenLoopGain,
        Contributor::ResistorTolerance,
        Contributor::ResistorTcr,
        Contributor::OffsetVoltage,
        Contributor::OffsetDrift,
        Contributor::BiasCurrent,
        Contributor::OffsetCurrent,
        Contributor::Cmrr,
        Contributor::ReferenceInitial,
        Contributor::ReferenceTempco,
        Contributor::ReferenceLoad,
        Contributor::SupplyTolerance,
        Contributor::Psrr,
        Contributor::InAmpGainError,
        Contributor::InAmpGainDrift,
        Contributor::InAmpOutputOffset,
        Contributor::SourceResistance,
        Contributor::Droop,
        Contributor::Noise,
    ];

    /// The label shown in reports (`source` in the JSON budget).
    pub fn label(self) -> &'static str {
        match self {
            Contributor::NominalRounding => "nominal rounding of gain and offset",
            Contributor::OpenLoopGain => "finite open-loop gain",
            Contributor::ResistorTolerance => "resistor tolerance",
            Contributor::ResistorTcr => "resistor TCR over temperature",
            Contributor::OffsetVoltage => "op-amp offset voltage x noise gain",
            Contributor::OffsetDrift => "op-amp offset drift",
            Contributor::BiasCurrent => "bias current x network resistance",
            Contributor::OffsetCurrent => "offset current x network resistance",
            Contributor::Cmrr => "CMRR x common-mode voltage",
            Contributor::ReferenceInitial => "reference initial accuracy",
            Contributor::ReferenceTempco => "reference tempco",
            Contributor::ReferenceLoad => "reference load regulation",
            Contributor::SupplyTolerance => "supply tolerance",
            Contributor::Psrr => "PSRR x supply tolerance",
            Contributor::InAmpGainError => "in-amp gain error",
            Contributor::InAmpGainDrift => "in-amp gain drift",
            Contributor::InAmpOutputOffset => "in-amp output offset",
            Contributor::SourceResistance => "sensor resistance tolerance and tempco",
            Contributor::Droop => "gain droop at the signal bandwidth",
            Contributor::Noise => "noise (peak, 3.3 sigma)",
        }
    }

    /// Whether the contributor is a fixed (systematic) error rather than
    /// a random spread.
    pub fn systematic(self) -> bool {
        matches!(
            self,
            Contributor::NominalRounding | Contributor::OpenLoopGain | Contributor::Droop
        )
    }
}
