//! Result tables: one row per galaxy and model, as CSV/ECSV (with units) and as a LaTeX
//! `tabular` with asymmetric errors, ready to paste into a paper.

use caldera_data::{MetaValue, OutputTable};
use caldera_infer::FitSummary;
use caldera_infer::summary::Interval;

/// One galaxy and model, as the tables show it.
pub type ResultRow = FitSummary;

fn column(
    rows: &[ResultRow],
    pick: impl Fn(&ResultRow) -> Option<Interval>,
    field: impl Fn(&Interval) -> f64,
) -> Vec<f64> {
    rows.iter()
        .map(|r| pick(r).map_or(f64::NAN, |i| field(&i)))
        .collect()
}

/// A summarised quantity: column prefix, unit, and how to find its interval in a row.
type Quantity = (
    &'static str,
    Option<&'static str>,
    fn(&ResultRow) -> Option<Interval>,
);

/// The results table: for σ/m median, 16/84 and 2.5/97.5 percentiles and the 95% upper limit
/// (NaN unless the galaxy gives only a limit); medians and 16/84 percentiles of ⟨v_rel⟩, V200,
/// c200, Υ_disk, Υ_bulge; then χ², dof, χ²/ν, AIC, BIC, convergence and τ.
#[must_use]
pub fn results_table(rows: &[ResultRow]) -> OutputTable {
    let mut table = OutputTable::default()
        .with_text_column("galaxy", rows.iter().map(|r| r.galaxy.clone()).collect())
        .with_text_column(
            "model",
            rows.iter().map(|r| r.model.name().to_string()).collect(),
        );
    let sigma = |r: &ResultRow| r.sigma_m_cm2_g;
    for (suffix, field) in [
        ("median", (|i: &Interval| i.median) as fn(&Interval) -> f64),
        ("p16", |i| i.p16),
        ("p84", |i| i.p84),
        ("p2_5", |i| i.p2_5),
        ("p97_5", |i| i.p97_5),
    ] {
        table = table.with_column(
            &format!("sigma_m_{suffix}"),
            Some("cm2 / g"),
            column(rows, sigma, field),
        );
    }
    table = table.with_column(
        "sigma_m_upper95",
        Some("cm2 / g"),
        column(rows, sigma, |i| i.upper95.unwrap_or(f64::NAN)),
    );
    let quantities: [Quantity; 6] = [
        ("v_rel", Some("km / s"), |r| r.v_rel_kms),
        ("v200", Some("km / s"), |r| r.v200_kms),
        ("c200", None, |r| r.c200),
        ("r1", Some("kpc"), |r| r.r1_kpc),
        ("upsilon_disk", None, |r| r.upsilon_disk),
        ("upsilon_bulge", None, |r| r.upsilon_bulge),
    ];
    for (name, unit, pick) in quantities {
        table = table
            .with_column(
                &format!("{name}_median"),
                unit,
                column(rows, pick, |i| i.median),
            )
            .with_column(&format!("{name}_p16"), unit, column(rows, pick, |i| i.p16))
            .with_column(&format!("{name}_p84"), unit, column(rows, pick, |i| i.p84));
    }
    table
        .with_column("chi2", None, rows.iter().map(|r| r.chi2).collect())
        .with_column("dof", None, rows.iter().map(|r| r.dof as f64).collect())
        .with_column("chi2_nu", None, rows.iter().map(|r| r.chi2_nu).collect())
        .with_column("aic", None, rows.iter().map(|r| r.aic).collect())
        .with_column("bic", None, rows.iter().map(|r| r.bic).collect())
        .with_column(
            "log_evidence",
            None,
            rows.iter()
                .map(|r| r.log_evidence.unwrap_or(f64::NAN))
                .collect(),
        )
        .with_column(
            "log_evidence_err",
            None,
            rows.iter()
                .map(|r| r.log_evidence_err.unwrap_or(f64::NAN))
                .collect(),
        )
        .with_flag_column("converged", rows.iter().map(|r| r.converged).collect())
        .with_flag_column(
            "resampled_in_halo_coordinates",
            rows.iter()
                .map(|r| r.resampled_in_halo_coordinates)
                .collect(),
        )
        .with_column("tau_max", None, rows.iter().map(|r| r.tau_max).collect())
        .with_column("age", Some("Gyr"), rows.iter().map(|r| r.age_gyr).collect())
        .with_meta(
            "description",
            MetaValue::Text("Caldera fit results: one row per galaxy and halo model".into()),
        )
}

/// A value with asymmetric errors in LaTeX math, with significant figures set by the smaller
/// error (two of them).
fn latex_interval(i: Option<Interval>) -> String {
    let Some(i) = i else { return "--".into() };
    if let Some(limit) = i.upper95 {
        return format!("$<{}$", significant(limit, 2));
    }
    let (plus, minus) = (i.p84 - i.median, i.median - i.p16);
    let scale = plus.min(minus).abs().max(f64::MIN_POSITIVE);
    let decimals = (1 - scale.log10().floor() as i32).clamp(0, 6) as usize;
    format!(
        "${:.d$}^{{+{:.d$}}}_{{-{:.d$}}}$",
        i.median,
        plus,
        minus,
        d = decimals
    )
}

fn significant(value: f64, digits: i32) -> String {
    if value == 0.0 || !value.is_finite() {
        return format!("{value}");
    }
    let decimals = (digits - 1 - value.abs().log10().floor() as i32).clamp(0, 8) as usize;
    format!("{value:.decimals$}")
}

fn latex_escape(text: &str) -> String {
    text.chars()
        .flat_map(|c| match c {
            '&' | '%' | '$' | '#' | '_' | '{' | '}' => vec!['\\', c],
            '~' => "\\textasciitilde{}".chars().collect(),
            '^' => "\\textasciicircum{}".chars().collect(),
            '\\' => "\\textbackslash{}".chars().collect(),
            c => vec![c],
        })
        .collect()
}

/// The results as a plain LaTeX `tabular`: σ/m (or its 95% upper limit), ⟨v_rel⟩, V200, c200,
/// halo age, χ²/ν and BIC per galaxy and model; unconverged fits marked with a dagger.
#[must_use]
pub fn latex_table(rows: &[ResultRow]) -> String {
    // ln Z appears as a column when any row has it.
    let with_evidence = rows.iter().any(|r| r.log_evidence.is_some());
    let (columns, evidence_head) = if with_evidence {
        ("llrrrrrrrr", " & $\\ln Z$")
    } else {
        ("llrrrrrrr", "")
    };
    let mut out = format!(
        "\\begin{{tabular}}{{{columns}}}\n\\hline\nGalaxy & Model & $\\sigma/m$ [cm$^2$\\,g$^{{-1}}$] & $\\langle v_{{\\rm rel}}\\rangle$ [km\\,s$^{{-1}}$] & $V_{{200}}$ [km\\,s$^{{-1}}$] & $c_{{200}}$ & $t_{{\\rm age}}$ [Gyr] & $\\chi^2/\\nu$ & BIC{evidence_head} \\\\\n\\hline\n",
    );
    for r in rows {
        let dagger = if r.converged { "" } else { "$^\\dagger$" };
        let evidence = match (with_evidence, r.log_evidence, r.log_evidence_err) {
            (false, _, _) => String::new(),
            (true, Some(z), Some(e)) => format!(" & ${z:.2} \\pm {e:.2}$"),
            (true, _, _) => " & --".to_string(),
        };
        out.push_str(&format!(
            "{}{dagger} & {} & {} & {} & {} & {} & {} & {:.2} & {:.1}{evidence} \\\\\n",
            latex_escape(&r.galaxy),
            latex_escape(r.model.name()),
            latex_interval(r.sigma_m_cm2_g),
            latex_interval(r.v_rel_kms),
            latex_interval(r.v200_kms),
            latex_interval(r.c200),
            r.age_gyr,
            r.chi2_nu,
            r.bic
        ));
    }
    out.push_str("\\hline\n\\end{tabular}\n");
    if rows.iter().any(|r| !r.converged) {
        out.push_str("% $^\\dagger$ chain not converged (longer than 50 autocorrelation times not reached): do not publish.\n");
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn intervals_and_limits_format_for_latex() {
        let i = Interval {
            median: 5.09,
            p16: 0.94,
            p84: 22.4,
            p2_5: 0.3,
            p97_5: 47.6,
            upper95: None,
        };
        assert_eq!(latex_interval(Some(i)), "$5.1^{+17.3}_{-4.2}$");
        let limit = Interval {
            upper95: Some(0.873),
            ..i
        };
        assert_eq!(latex_interval(Some(limit)), "$<0.87$");
        assert_eq!(latex_interval(None), "--");
        assert_eq!(latex_escape("Kiln_D01 & co"), "Kiln\\_D01 \\& co");
    }
}
