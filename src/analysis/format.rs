//! How numbers read in every output: a leaf that models and renderings both use, so
//! no model imports a rendering.

/// Three decimals, or a dash for a value that is not defined.
pub fn num(x: f64) -> String {
    if x.is_finite() {
        format!("{x:.3}")
    } else {
        "–".into()
    }
}

/// `decimals` decimals, or a dash for a value that is not defined (no NaN or inf on any
/// screen or in any text).
pub fn fixed(x: f64, decimals: usize) -> String {
    if x.is_finite() {
        format!("{x:.decimals$}")
    } else {
        "–".into()
    }
}

/// A share in 0..1 as a whole percentage, or a dash when not defined.
pub fn percent(x: f64) -> String {
    if x.is_finite() {
        format!("{:.0}%", x * 100.0)
    } else {
        "–".into()
    }
}

/// [`percent`] as the screens write it, with a space before the sign ("12 %").
pub fn percent_spaced(x: f64) -> String {
    if x.is_finite() {
        format!("{:.0} %", x * 100.0)
    } else {
        "–".into()
    }
}

/// A p-value as people read it: three decimals, or "< 0.001".
pub fn p_value(p: f64) -> String {
    if !p.is_finite() {
        "–".into()
    } else if p < 0.001 {
        "< 0.001".into()
    } else {
        format!("{p:.3}")
    }
}

/// Pads columns so the table reads in a terminal.
pub fn aligned(rows: &[Vec<String>]) -> String {
    let cols = rows.iter().map(Vec::len).max().unwrap_or(0);
    let widths: Vec<usize> = (0..cols)
        .map(|c| {
            rows.iter()
                .filter_map(|r| r.get(c))
                .map(|s| s.chars().count())
                .max()
                .unwrap_or(0)
        })
        .collect();
    let mut out = String::new();
    for row in rows {
        let line: Vec<String> = row
            .iter()
            .enumerate()
            .map(|(c, cell)| format!("{cell:<w$}", w = widths[c]))
            .collect();
        out.push_str(line.join("  ").trim_end());
        out.push('\n');
    }
    out
}
