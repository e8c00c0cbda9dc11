//! The one table of metrics. A metric is a typed value ([`Metric`]: a kind and, for the
//! metrics cut at k, its cut-off); [`METRICS`] lists per kind its key, label, tooltip,
//! where it is shown and its per-list function. Scoring, JSON and CSV keys, text
//! columns, the report, the charts and the screens' tooltips all read this table, so a
//! new metric is one row here plus its function in [`super::metrics`] and its tests.

use super::metrics::{self, JudgedList, ListSettings, Unjudged};

/// Every kind of metric the scoreboard computes, in the table's order.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub enum MetricKind {
    /// Normalised discounted cumulative gain at k.
    Ndcg,
    /// Discounted cumulative gain at k.
    Dcg,
    /// Precision at k.
    Precision,
    /// Expected reciprocal rank at k.
    Err,
    /// Share of the top k that is judged.
    Judged,
    /// Reciprocal rank of the first relevant item.
    Rr,
    /// Rank-biased precision over the whole list.
    Rbp,
    /// The most that unjudged and unseen items could add to RBP.
    RbpResidual,
}

/// Where a metric appears in the ranker tables (text, screen, report).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Columns {
    /// A column at every cut-off asked for.
    EveryCutoff,
    /// A column at the focus cut-off only (the report shows every cut-off).
    FocusCutoff,
    /// One column: the metric is not cut at k.
    Whole,
    /// In JSON and CSV only, not in the tables.
    DataOnly,
}

/// One row of the metric table.
#[derive(Debug)]
pub struct MetricSpec {
    /// The kind this row describes.
    pub kind: MetricKind,
    /// Stable key in JSON and CSV (`ndcg`, written `ndcg@10` with its cut-off).
    pub key: &'static str,
    /// Short label for column titles (`NDCG`).
    pub label: &'static str,
    /// What it measures and its source, for tooltips and the report.
    pub tooltip: &'static str,
    /// Whether it is cut at k (`key@k`) or computed over the whole list.
    pub at_cutoff: bool,
    /// Whether it reads the graded gains (else only levels or judged/unjudged).
    pub needs_graded_gains: bool,
    /// Whether the value is a share shown as a percentage rather than with an interval.
    pub is_share: bool,
    /// Where it is shown in the ranker tables.
    pub columns: Columns,
    /// The value for one list; `k` is the cut-off (ignored by whole-list metrics).
    pub per_list: fn(&PreparedList<'_>, &ListSettings, usize) -> f64,
}

/// The metric table, in display order.
pub const METRICS: [MetricSpec; 8] = [
    MetricSpec {
        kind: MetricKind::Ndcg,
        key: "ndcg",
        label: "NDCG",
        tooltip: "Normalised discounted cumulative gain at k (Järvelin & Kekäläinen 2002): DCG@k divided by the DCG@k of the context's judged items in the ideal order.",
        at_cutoff: true,
        needs_graded_gains: true,
        is_share: false,
        columns: Columns::EveryCutoff,
        per_list: |l, s, k| metrics::ndcg_at(l, s, k).unwrap_or(0.0),
    },
    MetricSpec {
        kind: MetricKind::Dcg,
        key: "dcg",
        label: "DCG",
        tooltip: "Discounted cumulative gain at k (Järvelin & Kekäläinen 2002): each gain times 1 / log2(rank + 1).",
        at_cutoff: true,
        needs_graded_gains: true,
        is_share: false,
        columns: Columns::DataOnly,
        per_list: |l, s, k| metrics::dcg_at(l, s, k),
    },
    MetricSpec {
        kind: MetricKind::Precision,
        key: "precision",
        label: "P",
        tooltip: "Precision at k: relevant items in the top k divided by k (common practice).",
        at_cutoff: true,
        needs_graded_gains: false,
        is_share: false,
        columns: Columns::FocusCutoff,
        per_list: |l, s, k| metrics::precision_at(l, s, k),
    },
    MetricSpec {
        kind: MetricKind::Err,
        key: "err",
        label: "ERR",
        tooltip: "Expected reciprocal rank at k (Chapelle et al. 2009): a reader stops at each item with probability (2^level − 1) / 2^top level.",
        at_cutoff: true,
        needs_graded_gains: false,
        is_share: false,
        columns: Columns::FocusCutoff,
        per_list: |l, s, k| metrics::err(l.effective, s.max_level, k),
    },
    MetricSpec {
        kind: MetricKind::Rr,
        key: "rr",
        label: "RR",
        tooltip: "Reciprocal rank of the first relevant item of the whole list (0 when there is none).",
        at_cutoff: false,
        needs_graded_gains: false,
        is_share: false,
        columns: Columns::Whole,
        per_list: |l, s, _| metrics::reciprocal_rank(l, s),
    },
    MetricSpec {
        kind: MetricKind::Rbp,
        key: "rbp",
        label: "RBP",
        tooltip: "Rank-biased precision over the whole list (Moffat & Zobel 2008): (1 − p) Σ r_i p^(i−1), r_i = gain / gain of the top level, unjudged items 0, p the persistence.",
        at_cutoff: false,
        needs_graded_gains: true,
        is_share: false,
        columns: Columns::Whole,
        per_list: |l, s, _| metrics::rbp(l.returned, s),
    },
    MetricSpec {
        kind: MetricKind::RbpResidual,
        key: "rbp_residual",
        label: "RBP residual",
        tooltip: "The most that unjudged and unseen items could add to RBP (Moffat & Zobel 2008): (1 − p) Σ over unjudged positions p^(i−1) + p^(list length).",
        at_cutoff: false,
        needs_graded_gains: false,
        is_share: false,
        columns: Columns::Whole,
        per_list: |l, s, _| metrics::rbp_residual(l.returned, s.persistence),
    },
    MetricSpec {
        kind: MetricKind::Judged,
        key: "judged",
        label: "judged",
        tooltip: "Share of the list's top k (as returned, before condensing) that is judged; divided by min(k, list length).",
        at_cutoff: true,
        needs_graded_gains: false,
        is_share: true,
        columns: Columns::EveryCutoff,
        per_list: |l, _, k| metrics::judged_at(l.returned, k),
    },
];

/// A metric: a kind and, for a metric cut at k, its cut-off.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub struct Metric {
    /// Which metric.
    pub kind: MetricKind,
    /// The cut-off k; None for a whole-list metric.
    pub cutoff: Option<usize>,
}

impl Metric {
    /// A metric cut at `k`.
    pub fn at(kind: MetricKind, k: usize) -> Metric {
        Metric {
            kind,
            cutoff: Some(k),
        }
    }

    /// A whole-list metric.
    pub fn whole(kind: MetricKind) -> Metric {
        Metric { kind, cutoff: None }
    }

    /// Its row of the table.
    pub fn spec(self) -> &'static MetricSpec {
        spec(self.kind)
    }

    /// The JSON / CSV key: `ndcg@10`, `rr`.
    pub fn key(self) -> String {
        match self.cutoff {
            Some(k) => format!("{}@{k}", self.spec().key),
            None => self.spec().key.to_string(),
        }
    }

    /// The column title: `NDCG@10`, `RR`.
    pub fn title(self) -> String {
        match self.cutoff {
            Some(k) => format!("{}@{k}", self.spec().label),
            None => self.spec().label.to_string(),
        }
    }

    /// Reads a key written by [`Metric::key`]; None for anything else.
    pub fn parse(key: &str) -> Option<Metric> {
        let (name, cutoff) = match key.split_once('@') {
            Some((name, k)) => (name, Some(k.parse::<usize>().ok().filter(|k| *k > 0)?)),
            None => (key, None),
        };
        let row = METRICS.iter().find(|m| m.key == name)?;
        (row.at_cutoff == cutoff.is_some()).then_some(Metric {
            kind: row.kind,
            cutoff,
        })
    }

    /// This metric's value for one prepared list.
    pub fn value(self, list: &PreparedList<'_>, settings: &ListSettings) -> f64 {
        (self.spec().per_list)(list, settings, self.cutoff.unwrap_or(usize::MAX))
    }
}

/// The row of `kind`.
pub fn spec(kind: MetricKind) -> &'static MetricSpec {
    METRICS
        .iter()
        .find(|m| m.kind == kind)
        .expect("every kind has a row")
}

/// Every metric scored at the cut-offs `ks`: the table's order, each metric cut at k
/// once per cut-off.
pub fn scored_metrics(ks: &[usize]) -> Vec<Metric> {
    METRICS
        .iter()
        .flat_map(|row| match row.at_cutoff {
            true => ks
                .iter()
                .map(|&k| Metric::at(row.kind, k))
                .collect::<Vec<_>>(),
            false => vec![Metric::whole(row.kind)],
        })
        .collect()
}

/// The columns of a ranker table: the table's order, every cut-off or the focus one as
/// each row says; `every_cutoff` shows focus-only metrics at every cut-off (the report).
pub fn table_columns(ks: &[usize], focus: usize, every_cutoff: bool) -> Vec<Metric> {
    METRICS
        .iter()
        .flat_map(|row| match row.columns {
            Columns::EveryCutoff => ks.iter().map(|&k| Metric::at(row.kind, k)).collect(),
            Columns::FocusCutoff if every_cutoff => {
                ks.iter().map(|&k| Metric::at(row.kind, k)).collect()
            }
            Columns::FocusCutoff => vec![Metric::at(row.kind, focus)],
            Columns::Whole => vec![Metric::whole(row.kind)],
            Columns::DataOnly => Vec::new(),
        })
        .collect()
}

/// A judged list made ready for the per-list functions: the levels as returned and
/// after the unjudged rule, with the context's ideal gains.
#[derive(Debug, Clone, Copy)]
pub struct PreparedList<'a> {
    /// Level of each position as returned; None = unjudged.
    pub returned: &'a [Option<u8>],
    /// The same after the unjudged rule (condensed lists drop the unjudged).
    pub effective: &'a [Option<u8>],
    /// Gains of every judged item of the context, highest first.
    pub ideal_gains: &'a [f64],
    /// Whether any judged item of the context is above level 0.
    pub has_relevant: bool,
}

/// Scores one list on every metric of `metrics`, in that order, into `out`. `scratch`
/// is reused between lists to avoid allocating per list. This is the function behind
/// every published figure.
pub fn score_list(
    list: &JudgedList<'_>,
    settings: &ListSettings,
    metrics: &[Metric],
    scratch: &mut Vec<Option<u8>>,
    out: &mut Vec<f64>,
) {
    scratch.clear();
    match settings.unjudged {
        Unjudged::Zero => scratch.extend_from_slice(list.levels),
        Unjudged::Condense => scratch.extend(list.levels.iter().filter(|l| l.is_some())),
    }
    let prepared = PreparedList {
        returned: list.levels,
        effective: scratch,
        ideal_gains: list.ideal_gains,
        has_relevant: list.has_relevant,
    };
    out.clear();
    out.extend(metrics.iter().map(|m| m.value(&prepared, settings)));
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn every_key_reads_back_as_its_metric() {
        for m in scored_metrics(&[1, 5, 10]) {
            assert_eq!(Metric::parse(&m.key()), Some(m));
        }
        assert_eq!(Metric::parse("rr@3"), None);
        assert_eq!(Metric::parse("ndcg"), None);
        assert_eq!(Metric::parse("ndcg@0"), None);
    }

    #[test]
    fn every_kind_has_exactly_one_row() {
        for row in &METRICS {
            assert_eq!(METRICS.iter().filter(|r| r.kind == row.kind).count(), 1);
            assert_eq!(METRICS.iter().filter(|r| r.key == row.key).count(), 1);
        }
    }
}
