//! Gold accuracy and machine judges in `agree`'s text output.

use std::fmt::Write;

use crate::analysis::agreement::AgreementReport;
use crate::analysis::agreement::reviewer_quality::MACHINE_CAUTION;
use crate::analysis::format::{aligned, num};

/// Gold accuracy per reviewer and each machine judge against the people's panel grade.
pub fn text(report: &AgreementReport) -> String {
    let mut out = String::new();
    gold_table(&mut out, report);
    machine_table(&mut out, report);
    out
}

/// Each reviewer's accuracy on gold pairs, overall and by day.
fn gold_table(out: &mut String, report: &AgreementReport) {
    if report
        .reviewers
        .iter()
        .any(|r| r.gold_n + r.gold_cant_judge > 0)
    {
        out.push_str("\nGold pairs (known levels):\n");
        let mut rows = vec![
            [
                "reviewer",
                "kind",
                "grades",
                "gold graded",
                "exactly right",
                "within one",
                "can't judge",
                "by day (exactly right)",
            ]
            .map(String::from)
            .to_vec(),
        ];
        let share = |x: Option<f64>| x.map_or("–".into(), |v| format!("{:.0}%", v * 100.0));
        for r in &report.reviewers {
            rows.push(vec![
                r.reviewer.clone(),
                r.kind.to_string(),
                r.grades.to_string(),
                r.gold_n.to_string(),
                share(r.gold_exact),
                share(r.gold_within_one),
                r.gold_cant_judge.to_string(),
                r.gold_by_day
                    .iter()
                    .map(|d| format!("{} {:.0}% of {}", d.day, d.exact * 100.0, d.n))
                    .collect::<Vec<_>>()
                    .join(", "),
            ]);
        }
        out.push_str(&aligned(&rows));
    }
}

/// Each machine judge against the people's panel grade, overall and by segment.
fn machine_table(out: &mut String, report: &AgreementReport) {
    if !report.machines.is_empty() {
        out.push_str(
            "\nMachine judges against the people's panel grade (settled, else lower median):\n",
        );
        let mut rows = vec![
            [
                "judge",
                "n",
                "kappa",
                "quadratic",
                "AC1",
                "exactly equal",
                "new",
                "established",
                "query",
                "anchor",
            ]
            .map(String::from)
            .to_vec(),
        ];
        for m in &report.machines {
            let mut row = vec![
                m.reviewer.clone(),
                m.n.to_string(),
                num(m.kappa),
                num(m.kappa_quadratic),
                num(m.ac1),
                if m.exact.is_finite() {
                    format!("{:.0}%", m.exact * 100.0)
                } else {
                    "–".into()
                },
            ];
            for s in &m.by_segment {
                row.push(match s.kappa {
                    Some(k) => format!("κ {} (n {})", num(k), s.n),
                    None => format!("– (n {})", s.n),
                });
            }
            rows.push(row);
        }
        out.push_str(&aligned(&rows));
        let _ = writeln!(out, "Caution: {}", MACHINE_CAUTION);
    }
}
