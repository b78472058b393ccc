//! The observer a design produced, as one typed value: which form it runs
//! (with the gain that makes it that form), its plant and fused tables,
//! gate, sizes and fixed-point tables. [`Design::observer`] is the one place
//! that reads the model's form together with the designed gain; emit, the
//! reports and the hand-off to the runtime match on [`ObserverForm`].

use super::{Design, GateDesign};
use crate::fixed_point::{FixedDesign, FormKind};
use crate::model::Form;
use nalgebra::DMatrix;

/// Which observer a design runs, with the innovation gain of that form.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum ObserverForm<'a> {
    /// Predictor (Luenberger): x̂⁺ = Ad x̂ + Bd u + L (y − Cd x̂ − Dd u).
    Predictor {
        /// L, n × p.
        l: &'a DMatrix<f64>,
    },
    /// Current form: x̂[k|k] = x̂[k|k−1] + K r, x̂[k+1|k] = Ad x̂[k|k] + Bd u.
    Current {
        /// K, n × p.
        k: &'a DMatrix<f64>,
    },
    /// A held observer (`gain_method = "hold"`): only the fused recursion
    /// x̂⁺ = F x̂ + G u + H y exists, with no separate innovation gain.
    Fused,
}

impl ObserverForm<'_> {
    /// The form's kind, as the accuracy analysis names it.
    pub fn kind(&self) -> FormKind {
        match self {
            Self::Predictor { .. } => FormKind::Predictor,
            Self::Current { .. } => FormKind::Current,
            Self::Fused => FormKind::Fused,
        }
    }

    /// The innovation gain the runtime applies (L or K), if any.
    pub fn gain(&self) -> Option<&DMatrix<f64>> {
        match *self {
            Self::Predictor { l } => Some(l),
            Self::Current { k } => Some(k),
            Self::Fused => None,
        }
    }

    /// The prediction's gain: L, or Ad K for the current form (whose
    /// prediction obeys the predictor's recursion with L = Ad K); `None`
    /// for a held observer.
    pub fn predictor_gain(&self, ad: &DMatrix<f64>) -> Option<DMatrix<f64>> {
        match *self {
            Self::Predictor { l } => Some(l.clone()),
            Self::Current { k } => Some(ad * k),
            Self::Fused => None,
        }
    }
}

/// The sampled plant: x⁺ = A x + B u, y = C x + D u.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct PlantMatrices<'a> {
    /// Ad, n × n.
    pub a: &'a DMatrix<f64>,
    /// Bd, n × m.
    pub b: &'a DMatrix<f64>,
    /// Cd, p × n.
    pub c: &'a DMatrix<f64>,
    /// Dd, p × m.
    pub d: &'a DMatrix<f64>,
}

/// The fused recursion x̂⁺ = F x̂ + G u + H y, which every design has.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct FusedMatrices<'a> {
    /// F, n × n.
    pub f: &'a DMatrix<f64>,
    /// G, n × m.
    pub g: &'a DMatrix<f64>,
    /// H, n × p.
    pub h: &'a DMatrix<f64>,
}

/// States, inputs and outputs of the observer.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Sizes {
    /// States n (with disturbance states, if any).
    pub n: usize,
    /// Inputs m.
    pub m: usize,
    /// Outputs p.
    pub p: usize,
}

/// Everything the runtime needs to run a design, typed; built by
/// [`Design::observer`], the one place that reads the model's form together
/// with the designed gain (emit, the reports and the hand-off to the runtime
/// match on [`ObserverForm`] instead).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ObserverTables<'a> {
    /// The form and its gain.
    pub form: ObserverForm<'a>,
    /// The sampled plant.
    pub plant: PlantMatrices<'a>,
    /// F, G, H.
    pub fused: FusedMatrices<'a>,
    /// The innovation gate, when the model asks for one.
    pub gate: Option<&'a GateDesign>,
    /// n, m, p.
    pub sizes: Sizes,
    /// The Q tables and their proofs, with a `[fixed_point]` section (the
    /// tables per format: [`FixedDesign::tables_in`]).
    pub fixed: Option<&'a FixedDesign>,
}

impl Design {
    /// The observer this design produced, as one typed value.
    pub fn observer(&self) -> ObserverTables<'_> {
        let form = match (self.model.observer.form, &self.gain) {
            (_, None) => ObserverForm::Fused,
            (Form::Predictor, Some(l)) => ObserverForm::Predictor { l },
            (Form::Current, Some(k)) => ObserverForm::Current { k },
        };
        ObserverTables {
            form,
            plant: PlantMatrices {
                a: &self.ad,
                b: &self.bd,
                c: &self.cd,
                d: &self.dd,
            },
            fused: FusedMatrices {
                f: &self.f,
                g: &self.g,
                h: &self.h,
            },
            gate: self.gate.as_ref(),
            sizes: Sizes {
                n: self.n(),
                m: self.m(),
                p: self.p(),
            },
            fixed: self.fixed_point.as_ref(),
        }
    }
}
