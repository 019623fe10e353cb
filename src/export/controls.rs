//! `controls.csv`: the verdict on each control point.

use crate::georef::ControlCheck;

/// Write the control-point checks as CSV (`controls.csv` in the output
/// folder): `id, line, chainage_m, residual_east_m, residual_north_m,
/// normalised_residual, loo_discrepancy_m, loo_statistic, flagged`. Values
/// that were not computed are left empty; metres to 0.1 mm.
///
/// # Errors
/// Any error of the writer.
pub fn write_checks_csv(
    mut w: impl std::io::Write,
    checks: &[ControlCheck],
) -> std::io::Result<()> {
    let f = |v: Option<f64>, d: usize| match v {
        Some(v) if v.is_finite() => format!("{v:.d$}"),
        _ => String::new(),
    };
    let mut s = String::from(
        "id,line,chainage_m,residual_east_m,residual_north_m,normalised_residual,loo_discrepancy_m,loo_statistic,flagged\n",
    );
    for c in checks {
        let id = if c.id.contains([',', '"', '\n']) {
            format!("\"{}\"", c.id.replace('"', "\"\""))
        } else {
            c.id.clone()
        };
        s.push_str(&format!(
            "{id},{},{},{},{},{},{},{},{}\n",
            c.line,
            f(Some(c.chainage), 4),
            f(Some(c.dx), 4),
            f(Some(c.dy), 4),
            f(Some(c.normalised), 2),
            f(c.loo_discrepancy, 4),
            f(c.loo_statistic, 2),
            if c.flagged { "yes" } else { "no" }
        ));
    }
    w.write_all(s.as_bytes())?;
    w.flush()
}
