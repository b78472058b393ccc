//! The `--json` output of `lookout design`: one object, stable key names.

use lookout_design::Design;
use nalgebra::{Complex, DMatrix};
use serde_json::{Value, json};

fn matrix(m: &DMatrix<f64>) -> Value {
    Value::Array(
        m.row_iter()
            .map(|row| Value::Array(row.iter().map(|&v| json!(v)).collect()))
            .collect(),
    )
}

fn poles(z: &[Complex<f64>]) -> Value {
    Value::Array(z.iter().map(|z| json!([z.re, z.im])).collect())
}

/// The design as one JSON object followed by a newline.
pub fn design(d: &Design) -> String {
    let kalman = d.kalman.as_ref().map_or(Value::Null, |k| {
        json!({
            "p": matrix(&k.p),
            "innovation_covariance": matrix(&k.innovation_covariance),
            "process_noise": matrix(&k.process_noise),
            "k": matrix(&k.k),
            "residual": k.residual,
        })
    });
    let hold = d.hold_mismatch.as_ref().map_or(
        Value::Null,
        |h| json!({ "state": matrix(&h.state), "input": matrix(&h.input) }),
    );
    let value = json!({
        "name": d.model.name,
        "sample_period": d.model.sample_period,
        "form": match d.model.observer.form {
            lookout_design::model::Form::Predictor => "predictor",
            lookout_design::model::Form::Current => "current",
        },
        "n": d.n(),
        "m": d.m(),
        "p": d.p(),
        "state_names": d.state_names(),
        "state_units": d.model.state_units(),
        "input_names": signal_names(d.model.plant.input_names.as_deref(), d.m(), "u"),
        "input_units": units(d.model.plant.input_units.as_deref(), d.m()),
        "output_names": signal_names(d.model.plant.output_names.as_deref(), d.p(), "y"),
        "output_units": units(d.model.plant.output_units.as_deref(), d.p()),
        "gate": d.gate.as_ref().map_or(Value::Null, |g| json!({
            "limit": g.limit,
            "channel_limit": g.channel_limit,
            "widening": g.widening,
            "corrections_per_stage": g.per_miss,
        })),
        "ad": matrix(&d.ad),
        "bd": matrix(&d.bd),
        "cd": matrix(&d.cd),
        "dd": matrix(&d.dd),
        "f": matrix(&d.f),
        "g": matrix(&d.g),
        "h": matrix(&d.h),
        "gain": d.observer().form.gain().map_or(Value::Null, matrix),
        "target_poles": d.target_poles.as_deref().map_or(Value::Null, poles),
        "error_poles": poles(&d.error_poles),
        "spectral_radius": d.spectral_radius,
        "plant_poles": poles(&d.plant_poles),
        "observability": {
            "rank": d.observability.rank,
            "n": d.n(),
            "condition": d.observability.condition,
            "pbh_margin": d.observability.smallest_pbh_margin(),
        },
        "hold_error_estimate": d.hold_accuracy,
        "stage_seconds": {
            "hold": d.stage_seconds.hold,
            "observability": d.stage_seconds.observability,
            "gain": d.stage_seconds.gain,
            "checks": d.stage_seconds.checks,
            "fixed_point": d.stage_seconds.fixed_point,
        },
        "kalman": kalman,
        "hold_mismatch": hold,
        "output_noise_gain": d.output_noise_gain,
        "model_hash": d.model_hash,
        "fixed_point": d.fixed_point.as_ref().map_or(Value::Null, fixed_point),
        "warnings": d.warnings.iter().map(ToString::to_string).collect::<Vec<_>>(),
    });
    format!("{value}\n")
}

/// The given names, or `prefix` and the index.
fn signal_names(given: Option<&[String]>, count: usize, prefix: &str) -> Vec<String> {
    (0..count)
        .map(|i| {
            given
                .and_then(|g| g.get(i))
                .cloned()
                .unwrap_or_else(|| format!("{prefix}{i}"))
        })
        .collect()
}

/// The given units, "" where none.
fn units(given: Option<&[String]>, count: usize) -> Vec<String> {
    (0..count)
        .map(|i| given.and_then(|g| g.get(i)).cloned().unwrap_or_default())
        .collect()
}

fn fixed_point(fx: &lookout_design::fixed_point::FixedDesign) -> Value {
    let tables: Vec<Value> = fx
        .form_tables
        .iter()
        .chain(&fx.fused_tables)
        .map(|t| {
            json!({
                "name": t.name,
                "row_exponents": t.exponents,
                "largest": t.largest,
                "max_abs_error": t.max_abs_error,
                "max_rel_error": t.max_rel_error,
            })
        })
        .collect();
    json!({
        "format": lookout_design::fixed_point::format_name(fx.format).to_lowercase(),
        "state_scale_exponents": fx.state_exponents,
        "input_scale_exponents": fx.input_exponents,
        "output_scale_exponents": fx.output_exponents,
        "state_bounds": fx.state_bounds,
        "innovation_bounds": fx.innovation_bounds,
        "error_poles": poles(&fx.error_poles),
        "spectral_radius": fx.spectral_radius,
        "fused_spectral_radius": fx.fused_spectral_radius,
        "max_table_error": fx.max_table_error,
        "tables": tables,
        "scales_from": match fx.signals.source {
            lookout_design::model::ScaleSource::Plant => "plant",
            lookout_design::model::ScaleSource::Readings => "readings",
        },
        "error_bound": fx.signals.error,
        "format_accuracy": accuracy(&fx.accuracy),
        "bound_proof": {
            "terms": fx.proof.terms,
            "strides": fx.proof.strides,
            "final_norm": fx.proof.final_norm,
        },
    })
}

/// `fixed_point.format_accuracy`: the predicted deviation of every form and
/// number format from the exact observer (README, "Choosing the form and
/// the number format").
fn accuracy(a: &lookout_design::fixed_point::Accuracy) -> Value {
    let rows: Vec<Value> = a
        .deviations
        .iter()
        .map(|d| {
            json!({
                "form": d.form.name(),
                "format": d.format.name(),
                "refused": d.refused,
                "usable": a.meets(d),
                "spectral_radius": if d.refused.is_some() { Value::Null } else { json!(d.spectral_radius) },
                "deviation": d.total,
                "from_tables": d.from_tables,
                "from_rounding": d.from_rounding,
                "bias": d.bias,
            })
        })
        .collect();
    json!({
        "range": a.range,
        "limit": a.limit,
        "limit_declared": a.limit_declared,
        "transient_peak": a.transient_peak,
        "transient_step": a.transient_step,
        "combinations": rows,
    })
}

#[cfg(test)]
mod tests {
    /// Issue 9: every estimated state is labelled, disturbance states by
    /// their own names, in state order.
    #[test]
    fn json_labels_every_state() {
        let path = std::path::Path::new(concat!(
            env!("CARGO_MANIFEST_DIR"),
            "/../../examples/conveyor_load.toml"
        ));
        let d = lookout_design::design_file(path).unwrap();
        let v: serde_json::Value = serde_json::from_str(&super::design(&d)).unwrap();
        assert_eq!(
            v["state_names"],
            serde_json::json!(["angle", "speed", "load_torque"])
        );
        assert_eq!(v["n"], 3);
    }
}
