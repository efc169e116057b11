//! How each budget line is worked out, as data: a formula over named
//! inputs (sensitivities, limits, outputs) whose value is the line itself,
//! with the parts behind each input. Built from the same parameters and
//! terms as the line ([`Model::budget_lines`]), so every number in an
//! explanation is the analysis's own; front ends show it as it is.
//!
//! The formula is in % of the ADC full scale at the binding end, in the
//! notation of `docs/error-budget.md`: numbers, input names, `+ - * /`,
//! parentheses and `|x|` for a magnitude. A line is the sum of the
//! magnitudes of its terms; `s_<name>` is the adjoint sensitivity of the
//! output to an element, `init_<name>` and `drift_<name>` its limits.

use super::contributor::Contributor;
use super::params::{Parameter, Target};
use super::Model;
use crate::design::Source;
use crate::need::{Calibration, Need};
use crate::units::PEAK_TO_PEAK_PER_RMS;
use serde::Serialize;

/// The explanation of one budget line (`explain` in the JSON budget).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct LineExplain {
    /// The line's value at the binding end, % FS, as an expression over
    /// the inputs' names.
    pub formula: String,
    /// Every name the formula uses, with its value.
    pub inputs: Vec<ExplainInput>,
    /// What the need's calibration removed from the line, where it
    /// removed something.
    pub note: Option<String>,
}

impl LineExplain {
    /// An explanation not written (a search candidate's lines: see
    /// `Model::report_unexplained`).
    pub(crate) fn unwritten() -> LineExplain {
        LineExplain {
            formula: String::new(),
            inputs: Vec::new(),
            note: None,
        }
    }
}

/// One named input of a [`LineExplain`].
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ExplainInput {
    /// The name the formula uses (`s_R3`, `init_VOS_U1A`, `FS` ...).
    pub name: String,
    /// Part ids behind it (empty for the sensor, the supply, the ADC).
    pub part_ids: Vec<String>,
    /// Designators behind it (`R3`, `U1A`, `VR1`; empty as above).
    pub refs: Vec<String>,
    /// Its unit (`V`, `V/V`, `V/A`, `A`, `1` for a fraction).
    pub unit: &'static str,
    /// Its value in that unit.
    pub value: f64,
    /// What it is, in words.
    pub what: String,
}

/// The formula's terms and inputs while a line is assembled.
struct Builder {
    terms: Vec<String>,
    inputs: Vec<ExplainInput>,
    removed: bool,
}

impl Builder {
    /// Add an input under a name not yet used in this line (a suffix keeps
    /// two inputs on the same element apart); returns the name.
    fn input(
        &mut self,
        name: String,
        value: f64,
        unit: &'static str,
        what: String,
        parts: &(Vec<String>, Vec<String>),
    ) -> String {
        let mut unique = name.clone();
        let mut n = 2;
        while self.inputs.iter().any(|i| i.name == unique) {
            unique = format!("{name}_{n}");
            n += 1;
        }
        self.inputs.push(ExplainInput {
            name: unique.clone(),
            part_ids: parts.1.clone(),
            refs: parts.0.clone(),
            unit,
            value,
            what,
        });
        unique
    }
}

/// A name the formula can carry: letters, digits and `_`.
fn ident(text: &str) -> String {
    text.chars()
        .map(|c| if c.is_ascii_alphanumeric() { c } else { '_' })
        .collect()
}

/// `lo` or `hi`.
fn end_name(end: usize) -> &'static str {
    if end == 0 {
        "lo"
    } else {
        "hi"
    }
}

impl Model {
    /// Designators and part ids of the parts an element belongs to.
    fn parts_of_element(&self, element: usize) -> (Vec<String>, Vec<String>) {
        let built = &self.built;
        if let Some(r) = built.resistors.iter().find(|r| r.element == element) {
            return (vec![r.designator.clone()], vec![r.part.part_id.clone()]);
        }
        for section in &built.sections {
            let inside = section
                .inamp
                .as_ref()
                .is_some_and(|i| i.output_offset == element || i.gain_resistors.contains(&element));
            if [section.vos, section.ibp, section.ibn, section.gain_element].contains(&element)
                || inside
            {
                let id = built
                    .packages
                    .iter()
                    .find(|p| p.designator == section.package)
                    .map(|p| p.part_id.clone());
                return (vec![section.designator.clone()], id.into_iter().collect());
            }
        }
        if let Some(s) = built.sources.iter().find(|s| s.element == element) {
            if let Source::Reference(id) = &s.source {
                return (vec![s.designator.clone()], vec![id.clone()]);
            }
        }
        if let Some(f) = &built.filter {
            if f.series_element == element {
                return (vec![f.series_ref.clone()], vec![f.series.part_id.clone()]);
            }
            if f.shunt_element == element {
                return (vec![f.shunt_ref.clone()], vec![f.shunt.part_id.clone()]);
            }
        }
        (Vec::new(), Vec::new())
    }

    /// The union of the parts of several elements, in order, without
    /// repeats.
    fn parts_of_elements(&self, elements: &[usize]) -> (Vec<String>, Vec<String>) {
        let mut refs = Vec::new();
        let mut ids = Vec::new();
        for &e in elements {
            let (r, i) = self.parts_of_element(e);
            for x in r {
                if !refs.contains(&x) {
                    refs.push(x);
                }
            }
            for x in i {
                if !ids.contains(&x) {
                    ids.push(x);
                }
            }
        }
        (refs, ids)
    }

    fn element_name(&self, element: usize) -> String {
        self.built
            .netlist
            .elements
            .get(element)
            .map(|e| ident(&e.name))
            .unwrap_or_else(|| format!("E{element}"))
    }

    /// The name, units (of the sensitivity and of the limits), wording and
    /// parts of what a parameter perturbs.
    fn target_of(
        &self,
        target: &Target,
    ) -> (String, &'static str, &'static str, String, Vec<usize>) {
        match target {
            Target::Resistors(list) if list.len() == 1 => {
                let name = self.element_name(list[0]);
                let what = format!("{name} (per unit of dR/R)");
                (name, "V", "1", what, list.clone())
            }
            Target::Resistors(list) => {
                let name = if *list == self.built.source_resistors {
                    "RSENSE".to_string()
                } else {
                    let (refs, _) = self.parts_of_elements(list);
                    format!("{}_gain", ident(&refs.join("_")))
                };
                let what = format!("{name}, its resistors together (per unit of dR/R)");
                (name, "V", "1", what, list.clone())
            }
            Target::Source(e) => {
                let name = self.element_name(*e);
                (name.clone(), "V/V", "V", name, vec![*e])
            }
            Target::BiasCommon(p, n) => {
                let name = format!("IB_{}", self.section_of(*p));
                let what = format!("both input currents of {} together", self.section_of(*p));
                (name, "V/A", "A", what, vec![*p, *n])
            }
            Target::BiasOffset(p, n) => {
                let name = format!("IOS_{}", self.section_of(*p));
                let what = format!(
                    "the difference of the input currents of {}",
                    self.section_of(*p)
                );
                (name, "V/A", "A", what, vec![*p, *n])
            }
            Target::AdcScale => (
                "VSUP".to_string(),
                "V/V",
                "V",
                "the supply as the ADC's scale".to_string(),
                Vec::new(),
            ),
            Target::Sources(list) => (
                "VSUP".to_string(),
                "V/V",
                "V",
                "the supply, with the sensor it excites".to_string(),
                list.iter().map(|(e, _)| *e).collect(),
            ),
        }
    }

    /// The designator of the section a bias source belongs to.
    fn section_of(&self, element: usize) -> String {
        self.built
            .sections
            .iter()
            .find(|s| s.ibp == element || s.ibn == element)
            .map(|s| ident(&s.designator))
            .unwrap_or_else(|| self.element_name(element))
    }

    /// The terms of one parameter on `line` at `end`.
    fn parameter_terms(
        &self,
        parameter: &Parameter,
        line: Contributor,
        end: usize,
        b: &mut Builder,
    ) {
        let (name, s_unit, unit, what, elements) = self.target_of(&parameter.target);
        let parts = self.parts_of_elements(&elements);
        if parameter.initial_contributor == line {
            let calibrated = if parameter.calibratable {
                self.calibration
            } else {
                Calibration::None
            };
            match (calibrated, end) {
                (Calibration::None, _) => {
                    let s = b.input(
                        format!("s_{name}"),
                        parameter.sensitivity[end],
                        s_unit,
                        format!("sensitivity of out to {what}, {} end", end_name(end)),
                        &parts,
                    );
                    let i = b.input(
                        format!("init_{name}"),
                        parameter.initial[end],
                        unit,
                        format!("initial limit of {what}"),
                        &parts,
                    );
                    b.terms.push(format!("|{s} * {i}|"));
                }
                (Calibration::Offset, 1) => {
                    let mut names = Vec::new();
                    for e in 0..2 {
                        let s = b.input(
                            format!("s_{name}_{}", end_name(e)),
                            parameter.sensitivity[e],
                            s_unit,
                            format!("sensitivity of out to {what}, {} end", end_name(e)),
                            &parts,
                        );
                        let i = b.input(
                            format!("init_{name}_{}", end_name(e)),
                            parameter.initial[e],
                            unit,
                            format!("initial limit of {what}, {} end", end_name(e)),
                            &parts,
                        );
                        names.push((s, i));
                    }
                    b.terms.push(format!(
                        "|{} * {} - {} * {}|",
                        names[1].0, names[1].1, names[0].0, names[0].1
                    ));
                }
                _ => b.removed = true,
            }
        }
        if parameter.drift_contributor == line && parameter.drift != 0.0 {
            let same = [format!("s_{name}"), format!("s_{name}_{}", end_name(end))];
            let s = match b.inputs.iter().find(|i| same.contains(&i.name)) {
                Some(found) if found.value == parameter.sensitivity[end] => found.name.clone(),
                _ => b.input(
                    format!("s_{name}"),
                    parameter.sensitivity[end],
                    s_unit,
                    format!("sensitivity of out to {what}, {} end", end_name(end)),
                    &parts,
                ),
            };
            let d = b.input(
                format!("drift_{name}"),
                parameter.drift,
                unit,
                format!("drift limit of {what} over the temperature range"),
                &parts,
            );
            b.terms.push(format!("|{s} * {d}|"));
        }
    }

    /// A systematic line from `minuend - subtrahend` at both ends, after
    /// calibration.
    #[allow(clippy::too_many_arguments)]
    fn difference_terms(
        &self,
        end: usize,
        minuend: ([f64; 2], &str, &str),
        subtrahend: ([f64; 2], &str, &str),
        parts: &(Vec<String>, Vec<String>),
        b: &mut Builder,
    ) {
        let pair = |e: usize, b: &mut Builder| {
            let m = b.input(
                format!("{}_{}", minuend.1, end_name(e)),
                minuend.0[e],
                "V",
                format!("{}, {} end", minuend.2, end_name(e)),
                parts,
            );
            let s = b.input(
                format!("{}_{}", subtrahend.1, end_name(e)),
                subtrahend.0[e],
                "V",
                format!("{}, {} end", subtrahend.2, end_name(e)),
                &(Vec::new(), Vec::new()),
            );
            format!("({m} - {s})")
        };
        match (self.calibration, end) {
            (Calibration::None, _) => {
                let d = pair(end, b);
                b.terms.push(format!("|{d}|"));
            }
            (Calibration::Offset, 1) => {
                let lo = pair(0, b);
                let hi = pair(1, b);
                b.terms.push(format!("|{hi} - {lo}|"));
            }
            _ => b.removed = true,
        }
    }

    /// Every resistor and reference of the design (what sets the nominal
    /// gain and offset), as parts.
    fn value_parts(&self) -> (Vec<String>, Vec<String>) {
        let mut elements: Vec<usize> = self.built.resistors.iter().map(|r| r.element).collect();
        elements.extend(self.built.sources.iter().map(|s| s.element));
        self.parts_of_elements(&elements)
    }

    /// Every amplifier section, as parts.
    fn section_parts(&self) -> Vec<usize> {
        self.built.sections.iter().map(|s| s.gain_element).collect()
    }

    /// The explanation of `line` at `end` (the line's value there is the
    /// formula's).
    pub(crate) fn explain_line(&self, need: &Need, line: Contributor, end: usize) -> LineExplain {
        let mut b = Builder {
            terms: Vec::new(),
            inputs: Vec::new(),
            removed: false,
        };
        match line {
            Contributor::Noise => {
                let mut elements: Vec<usize> =
                    self.built.resistors.iter().map(|r| r.element).collect();
                elements.extend(self.section_parts());
                elements.extend(self.built.sources.iter().map(|s| s.element));
                if let Some(f) = &self.built.filter {
                    elements.push(f.series_element);
                }
                let parts = self.parts_of_elements(&elements);
                let rms = b.input(
                    "rms".to_string(),
                    self.noise.rms_v,
                    "V",
                    "output RMS noise (resistors, amplifier voltage and current noise with \
                     their 1/f parts from accuracy.noise_low_hz up, references)"
                        .to_string(),
                    &parts,
                );
                b.terms
                    .push(format!("0.5 * {PEAK_TO_PEAK_PER_RMS} * {rms}"));
            }
            Contributor::Droop => {
                let (low, high) = need.target_window();
                let span = (high - low).abs();
                let mut elements = self.section_parts();
                if let Some(f) = &self.built.filter {
                    elements.push(f.series_element);
                    elements.push(f.shunt_element);
                }
                let parts = self.parts_of_elements(&elements);
                let loss = if span > 0.0 { self.droop / span } else { 0.0 };
                let d = b.input(
                    "droop".to_string(),
                    loss,
                    "1",
                    "1 - |H(f_b)/H(0)|, the chain's loss at the signal bandwidth".to_string(),
                    &parts,
                );
                let w = b.input(
                    "window".to_string(),
                    span,
                    "V",
                    "the output window (high - low)".to_string(),
                    &(Vec::new(), Vec::new()),
                );
                b.terms.push(format!("{d} * {w}"));
            }
            Contributor::NominalRounding | Contributor::OpenLoopGain => {
                if !self.systematic.iter().any(|t| t.contributor == line) {
                    return LineExplain {
                        formula: "0".to_string(),
                        inputs: Vec::new(),
                        note: None,
                    };
                }
                let rounding = self
                    .systematic
                    .iter()
                    .find(|t| t.contributor == Contributor::NominalRounding)
                    .map(|t| t.raw)
                    .unwrap_or([0.0; 2]);
                let amps_ideal = [self.ideal[0] + rounding[0], self.ideal[1] + rounding[1]];
                if line == Contributor::NominalRounding {
                    let parts = self.value_parts();
                    self.difference_terms(
                        end,
                        (amps_ideal, "Vamps", "output with ideal op-amps"),
                        (self.ideal, "Vtarget", "the ideal output K * Vsensor + B"),
                        &parts,
                        &mut b,
                    );
                } else {
                    let parts = self.parts_of_elements(&self.section_parts());
                    let out = self.nominal_output;
                    self.difference_terms(
                        end,
                        (
                            out,
                            "Vout",
                            "output with every op-amp at its minimum open-loop gain",
                        ),
                        (amps_ideal, "Vamps", "output with ideal op-amps"),
                        &parts,
                        &mut b,
                    );
                }
            }
            _ => {
                for parameter in &self.params {
                    self.parameter_terms(parameter, line, end, &mut b);
                }
            }
        }
        let fs = b.input(
            "FS".to_string(),
            self.full_scale,
            "V",
            "ADC full scale (adc.high_v - adc.low_v)".to_string(),
            &(Vec::new(), Vec::new()),
        );
        let sum = if b.terms.is_empty() {
            "0".to_string()
        } else {
            b.terms.join(" + ")
        };
        let note = b.removed.then(|| {
            format!(
                "the {} calibration trims away what is fixed on the day at the {} end",
                match self.calibration {
                    Calibration::None => "",
                    Calibration::Offset => "offset",
                    Calibration::TwoPoint => "two-point",
                },
                end_name(end)
            )
        });
        LineExplain {
            formula: format!("100 * ({sum}) / {fs}"),
            inputs: b.inputs,
            note,
        }
    }
}
