//! The readable report of `lookout design`.

use lookout_design::Design;
use lookout_design::design::ObserverForm;
use lookout_design::model::{Domain, Form, GainMethod, GainSource};
use nalgebra::{Complex, DMatrix};
use std::fmt::Write as _;

/// A number in a fixed 12-character column: plain decimals for ordinary
/// magnitudes, scientific notation for very small or large ones.
fn num(v: f64) -> String {
    let a = v.abs();
    if v == 0.0 || (1e-3..1e5).contains(&a) {
        format!("{v:>12.6}")
    } else {
        format!("{v:>12.4e}")
    }
}

fn complex(z: Complex<f64>) -> String {
    if z.im == 0.0 {
        format!("{:.6}", z.re)
    } else {
        format!(
            "{:.6} {} {:.6}i",
            z.re,
            if z.im < 0.0 { "−" } else { "+" },
            z.im.abs()
        )
    }
}

fn matrix(s: &mut String, label: &str, m: &DMatrix<f64>) {
    for (i, row) in m.row_iter().enumerate() {
        let lead = if i == 0 {
            format!("  {label:<4}=")
        } else {
            " ".repeat(7)
        };
        let entries: Vec<String> = row.iter().map(|&v| num(v)).collect();
        let _ = writeln!(s, "{lead} [{} ]", entries.join(""));
    }
}

fn names(given: Option<&[String]>, units: Option<&[String]>, count: usize, prefix: &str) -> String {
    (0..count)
        .map(|i| {
            let name = given
                .and_then(|g| g.get(i))
                .cloned()
                .unwrap_or_else(|| format!("{prefix}{i}"));
            match units.and_then(|u| u.get(i)).filter(|u| !u.is_empty()) {
                Some(unit) => format!("{name} [{unit}]"),
                None => name,
            }
        })
        .collect::<Vec<_>>()
        .join(", ")
}

/// The report as text.
pub fn design(d: &Design) -> String {
    let model = &d.model;
    let plant = &model.plant;
    let t = model.sample_period;
    let mut s = String::new();
    let _ = writeln!(
        s,
        "lookout design report: model `{}` ({})",
        model.name, d.origin
    );
    let _ = writeln!(s);
    let _ = writeln!(s, "sample period   {t} s ({} Hz)", 1.0 / t);
    let form = match model.observer.form {
        Form::Predictor => "predictor (Luenberger): x̂[k+1] = Ad x̂[k] + Bd u[k] + L r[k]",
        Form::Current => "current: x̂[k|k] = x̂[k|k−1] + K r[k], x̂[k+1|k] = Ad x̂[k|k] + Bd u[k]",
    };
    let _ = writeln!(s, "observer form   {form}");
    let source = match &model.observer.gain_source {
        GainSource::Poles(_) => "s-plane poles, mapped by z = exp(s T)".to_string(),
        GainSource::DiscretePoles(_) => "z-plane poles".to_string(),
        GainSource::Gain {
            method: GainMethod::Hold,
            ..
        } => "continuous gain L, whole observer held (zero-order hold)".to_string(),
        GainSource::Gain {
            method: GainMethod::PoleMap,
            ..
        } => "continuous gain L, eig(A − L C) mapped by z = exp(s T)".to_string(),
        GainSource::Kalman(_) => "steady-state Kalman filter (filter Riccati equation)".to_string(),
    };
    let _ = writeln!(s, "gain from       {source}");
    let _ = writeln!(
        s,
        "states          {}",
        names(
            Some(&d.state_names()),
            Some(&d.model.state_units()),
            d.n(),
            "x"
        )
    );
    let _ = writeln!(
        s,
        "inputs          {}",
        names(
            plant.input_names.as_deref(),
            plant.input_units.as_deref(),
            d.m(),
            "u"
        )
    );
    let _ = writeln!(
        s,
        "outputs         {}",
        names(
            plant.output_names.as_deref(),
            plant.output_units.as_deref(),
            d.p(),
            "y"
        )
    );
    let _ = writeln!(s);

    let sampled = match plant.domain {
        Domain::Continuous => "sampled plant (zero-order hold of the continuous model)",
        Domain::Discrete => "plant (given in discrete time)",
    };
    let _ = writeln!(s, "{sampled}");
    if let Some(acc) = d.hold_accuracy {
        let _ = writeln!(
            s,
            "  hold error  {acc:.1e} (estimated relative error of [Ad Bd], 1-norm; refused above {:.0e})",
            lookout_design::numerics::EXPM_TOLERANCE
        );
    }
    matrix(&mut s, "Ad", &d.ad);
    matrix(&mut s, "Bd", &d.bd);
    matrix(&mut s, "Cd", &d.cd);
    matrix(&mut s, "Dd", &d.dd);
    let plant_poles: Vec<String> = d.plant_poles.iter().map(|&z| complex(z)).collect();
    let _ = writeln!(s, "  poles (z)   {}", plant_poles.join(", "));
    let _ = writeln!(s);

    let obs = &d.observability;
    let _ = writeln!(
        s,
        "observability   rank {} of {} (staircase reduction of the shifted, normalised pair; pivot tolerance {:.2e}); condition {:.3e} (1 / smallest pivot)",
        obs.rank,
        d.n(),
        obs.rank_tolerance,
        obs.condition
    );
    let _ = writeln!(s);

    match d.observer().form {
        ObserverForm::Predictor { l } => {
            let _ = writeln!(s, "gain L (applied to the innovation r = y − Cd x̂ − Dd u)");
            matrix(&mut s, "L", l);
        }
        ObserverForm::Current { k } => {
            let _ = writeln!(
                s,
                "gain K (applied to the innovation r = y − Cd x̂[k|k−1] − Dd u)"
            );
            matrix(&mut s, "K", k);
        }
        ObserverForm::Fused => {
            let _ = writeln!(
                s,
                "gain: none (the held observer has no separate innovation gain)"
            );
        }
    }
    let _ = writeln!(s);
    let _ = writeln!(s, "fused tables    x̂⁺ = F x̂ + G u + H y");
    matrix(&mut s, "F", &d.f);
    matrix(&mut s, "G", &d.g);
    matrix(&mut s, "H", &d.h);
    let _ = writeln!(s);

    let _ = writeln!(s, "error dynamics (eigenvalues of F)");
    let _ = writeln!(
        s,
        "  {:<34}{:>10}  {:<34}{:>14}",
        "z", "|z|", "s = ln(z)/T (rad/s)", "time const."
    );
    for (z, sp) in d.error_poles.iter().zip(d.error_poles_s()) {
        let (s_text, tau) = match sp {
            Some(p) if p.re < 0.0 => (complex(p), format!("{:.4e} s", -1.0 / p.re)),
            Some(p) => (complex(p), "none".into()),
            None => ("none (z = 0: deadbeat)".into(), "0".into()),
        };
        let _ = writeln!(
            s,
            "  {:<34}{:>10.6}  {:<34}{:>14}",
            complex(*z),
            z.norm(),
            s_text,
            tau
        );
    }
    let rho = d.spectral_radius;
    let per_e = if rho > 0.0 { -1.0 / rho.ln() } else { 0.0 };
    let _ = writeln!(
        s,
        "  spectral radius {rho:.9}: errors shrink by a factor e every {per_e:.2} samples ({:.4e} s)",
        per_e * t
    );
    if let Some(target) = &d.target_poles {
        let worst = target
            .iter()
            .map(|z| {
                d.error_poles
                    .iter()
                    .map(|p| (p - z).norm() / z.norm().max(1e-300))
                    .fold(f64::INFINITY, f64::min)
            })
            .fold(0.0, f64::max);
        let _ = writeln!(
            s,
            "  requested poles met to {worst:.2e} (largest relative distance)"
        );
    }
    if let Some(k) = &d.kalman {
        let _ = writeln!(s);
        let _ = writeln!(
            s,
            "steady-state Kalman filter (Riccati residual {:.2e})",
            k.residual
        );
        matrix(&mut s, "Qd", &k.process_noise);
        matrix(&mut s, "P", &k.p);
        matrix(&mut s, "S", &k.innovation_covariance);
    }
    if let Some(g) = &d.gate {
        let _ = writeln!(
            s,
            "innovation gate: rᵀ S⁻¹ r ≤ {:.4} with every channel, r_j² / S_jj ≤ {:.4} per channel otherwise",
            g.limit, g.channel_limit
        );
    }
    let _ = writeln!(s);
    let gains: Vec<String> = d
        .output_noise_gain
        .iter()
        .enumerate()
        .map(|(j, g)| {
            let name = plant
                .output_names
                .as_ref()
                .and_then(|n| n.get(j))
                .cloned()
                .unwrap_or_else(|| format!("y{j}"));
            if g.is_nan() {
                format!("{name} not computable")
            } else {
                format!("{name} {g:.3}")
            }
        })
        .collect();
    let _ = writeln!(
        s,
        "noise gain      {} (std of the output estimate per unit std of white noise on that output; above 1 the observer adds noise)",
        gains.join(", ")
    );
    let _ = writeln!(s);
    if let Some(fx) = &d.fixed_point {
        fixed_point(&mut s, d, fx);
    }
    if d.warnings.is_empty() {
        let _ = writeln!(s, "warnings        none");
    } else {
        let _ = writeln!(s, "warnings");
        for w in &d.warnings {
            let _ = writeln!(s, "  - {w}");
        }
    }
    s
}

fn fixed_point(s: &mut String, d: &Design, fx: &lookout_design::fixed_point::FixedDesign) {
    use lookout_design::fixed_point::format_name;
    let names = d.state_names();
    let _ = writeln!(
        s,
        "fixed point     {} (value v at scale exponent e stored as round(v · 2^(b − e)), b the fraction bits)",
        format_name(fx.format)
    );
    let p = &fx.proof;
    match &fx.signals.error {
        None => {
            let _ = writeln!(
                s,
                "  scales from the readings (scales_from = \"readings\"): proven peaks for |u| ≤ input_range, |y| ≤ output_range, from an estimate inside its driven bound:"
            );
        }
        Some(err) => {
            let e: Vec<String> = err.iter().map(|v| format!("{v:.3e}")).collect();
            let _ = writeln!(
                s,
                "  scales from the plant (scales_from = \"plant\"): peak ≤ state_range + error bound [{}], the error driven by initial_error, output_noise and model_error through e⁺ = F e + w − H v;",
                e.join(", ")
            );
            let _ = writeln!(
                s,
                "  valid while the plant stays inside state_range (the runtime counts saturations otherwise)"
            );
        }
    }
    let _ = writeln!(
        s,
        "  ℓ1 impulse response: {} terms one by one, then level(s) of 64 powers: {} (last stride {:.3e} steps), ending at ‖F^t‖∞ = {:.1e}",
        p.terms,
        p.strides.len(),
        p.strides.last().copied().unwrap_or(p.terms as f64),
        p.final_norm
    );
    let _ = writeln!(
        s,
        "  {:<20}{:>14}{:>14}{:>6}",
        "signal", "proven peak", "scale 2^e", "e"
    );
    for (i, (b, e)) in fx.state_bounds.iter().zip(&fx.state_exponents).enumerate() {
        let name = names.get(i).cloned().unwrap_or_else(|| format!("x{i}"));
        let _ = writeln!(
            s,
            "  {name:<20}{b:>14.6e}{:>14.6e}{e:>6}",
            2f64.powi(i32::from(*e))
        );
    }
    for (j, e) in fx.input_exponents.iter().enumerate() {
        let name = d
            .model
            .plant
            .input_names
            .as_ref()
            .and_then(|n| n.get(j))
            .cloned()
            .unwrap_or_else(|| format!("u{j}"));
        let _ = writeln!(
            s,
            "  {name:<20}{:>14}{:>14.6e}{e:>6}",
            "(declared)",
            2f64.powi(i32::from(*e))
        );
    }
    for (j, (b, e)) in fx
        .innovation_bounds
        .iter()
        .zip(&fx.output_exponents)
        .enumerate()
    {
        let name = d
            .model
            .plant
            .output_names
            .as_ref()
            .and_then(|n| n.get(j))
            .cloned()
            .unwrap_or_else(|| format!("y{j}"));
        let _ = writeln!(
            s,
            "  {:<20}{b:>14.6e}{:>14.6e}{e:>6}",
            format!("{name} (r)"),
            2f64.powi(i32::from(*e))
        );
    }
    let _ = writeln!(
        s,
        "  {:<8}{:<22}{:>14}{:>14}{:>12}",
        "table", "row exponents", "largest", "max error", "relative"
    );
    let mut seen = Vec::new();
    for t in fx.form_tables.iter().chain(&fx.fused_tables) {
        if seen.contains(&t.name) {
            continue;
        }
        seen.push(t.name);
        let exps: Vec<String> = t.exponents.iter().map(ToString::to_string).collect();
        let _ = writeln!(
            s,
            "  {:<8}{:<22}{:>14.6e}{:>14.3e}{:>12.3e}",
            t.name,
            format!("[{}]", exps.join(", ")),
            t.largest,
            t.max_abs_error,
            t.max_rel_error
        );
    }
    let poles: Vec<String> = fx.error_poles.iter().map(|&z| complex(z)).collect();
    let _ = writeln!(s, "  quantised error poles (z)  {}", poles.join(", "));
    let _ = writeln!(
        s,
        "  spectral radius            {:.9} quantised, {:.9} exact (fused tables: {:.9})",
        fx.spectral_radius, d.spectral_radius, fx.fused_spectral_radius
    );
    let a = &fx.accuracy;
    let _ = writeln!(
        s,
        "  transient growth           peak ‖Fᵏ‖∞ {:.3e} at step {} (states measured against their scales)",
        a.transient_peak, a.transient_step
    );
    accuracy_table(s, &names, a);
    let _ = writeln!(s);
}

/// The form × format table of predicted deviations (design issue 12).
fn accuracy_table(s: &mut String, names: &[String], a: &lookout_design::fixed_point::Accuracy) {
    let _ = writeln!(
        s,
        "  proven bound on the deviation from the exact observer, per state (rounded tables + worst-case per-step rounding; signals inside their scales):"
    );
    let mut head = format!("  {:<10}{:<7}{:>13}", "form", "format", "error radius");
    for name in names {
        let _ = write!(head, "{name:>12}");
    }
    let _ = writeln!(s, "{head}  within limit");
    let mut limit = format!(
        "  {:<30}",
        if a.limit_declared {
            "deviation_limit"
        } else {
            "limit (1 %)"
        }
    );
    for l in &a.limit {
        let _ = write!(limit, "{l:>12.3e}");
    }
    let _ = writeln!(s, "{limit}");
    for d in &a.deviations {
        let mut row = format!("  {:<10}{:<7}", d.form.name(), d.format.name());
        match &d.refused {
            Some(why) => {
                let _ = writeln!(s, "{row}cannot run: {why}");
            }
            None => {
                let _ = write!(row, "{:>13.9}", d.spectral_radius);
                for v in &d.total {
                    let _ = write!(row, "{v:>12.3e}");
                }
                // A bound above the limit proves nothing either way: say so rather
                // than "no" (the worst case adds every rounding up).
                let _ = writeln!(
                    s,
                    "{row}  {}",
                    if a.meets(d) { "yes" } else { "not proven" }
                );
            }
        }
    }
}
