//! The pool-bias table of `score`'s text output and its reading in words.

use crate::analysis::format::{aligned, num, percent};
use crate::analysis::scoring::scoreboard::Scoreboard;

/// The pool-bias table and its reading in words.
pub fn table_text(board: &Scoreboard) -> String {
    let mut out = String::new();
    if board.pool_bias.is_empty() {
        return out;
    }
    out.push_str("\nPool bias (leave-one-out, Zobel 1998): each ranker scored again without the judged pairs only it found in its top k:\n");
    let mut rows = vec![
        [
            "ranker",
            "metric",
            "as scored",
            "without own pairs",
            "drop",
            "contexts",
            "own pairs",
            "judged",
            "judged without",
            "Kendall tau-b",
        ]
        .map(String::from)
        .to_vec(),
    ];
    for p in &board.pool_bias {
        rows.push(vec![
            match &p.from_file {
                Some(file) => format!("{} ({file})", p.ranker),
                None => p.ranker.clone(),
            },
            p.metric.clone(),
            num(p.mean),
            p.mean_left_out.map_or("–".into(), num),
            p.drop.map_or("–".into(), |d| format!("{d:+.3}")),
            p.contexts.to_string(),
            p.unique_pairs.to_string(),
            percent(p.judged),
            percent(p.judged_left_out),
            p.kendall_tau_b.map_or("–".into(), |t| format!("{t:.3}")),
        ]);
    }
    out.push_str(&aligned(&rows));
    out.push_str("Kendall tau-b compares the ranker order by mean NDCG@k with the order when only this ranker loses its own pairs (1 = unchanged).\n");
    out
}
