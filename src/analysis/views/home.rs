//! Home's view model: what the study holds, how far the depth-k pool is graded on the
//! active scale, each reviewer's standing, and the next step to take.

use serde::Serialize;

use crate::analysis::judged::judgments::{self, GradeSource};
use crate::core::pooling::depth_pool;
use crate::study::queues::QueueProgress;
use crate::study::snapshot::Snapshot;
use crate::study::{Study, StudyCounts, StudyError};

/// How much of one ranker's top k has a grade on the active scale.
#[derive(Debug, Clone, Default, PartialEq, Serialize)]
pub struct Coverage {
    /// The ranker.
    pub ranker: String,
    /// Pairs of its top k with a level scoring uses (a reviewer's level or a settled
    /// grade; can't-judge alone does not count).
    pub graded: usize,
    /// Pairs in its top k over all contexts.
    pub pairs: usize,
}

/// One reviewer's standing on the active scale.
#[derive(Debug, Clone, Default, PartialEq, Serialize)]
pub struct ReviewerProgress {
    /// The reviewer.
    pub reviewer: String,
    /// Pairs graded on the active scale (queued or not; can't judge included).
    pub grades: usize,
    /// True for a machine judge (its grades stay outside the panel unless the lead
    /// counts them in); written only when true, so a people-only study's JSON is as
    /// older builds printed it.
    #[serde(skip_serializing_if = "std::ops::Not::not")]
    pub machine: bool,
    /// (done, total) of the reviewer's queue, once a queue exists.
    pub queue: Option<(u64, u64)>,
}

impl ReviewerProgress {
    /// Grades given outside the reviewer's queue (a pilot block, an import, a gap).
    pub fn outside_queue(&self) -> usize {
        self.grades
            .saturating_sub(self.queue.map_or(0, |(done, _)| done as usize))
    }
}

/// A running pilot as Home mentions it.
#[derive(Debug, Clone, Default, PartialEq, Serialize)]
pub struct PilotSummary {
    /// The pilot's scales (each reviewer grades them in their own rotated order).
    pub scales: Vec<String>,
    /// Reviewers grading it.
    pub reviewers: usize,
    /// Pilot grades given, over every reviewer and block.
    pub graded: usize,
    /// Pilot grades asked for: each reviewer's pilot pairs on every pilot scale.
    pub needed: usize,
}

/// Everything Home shows (and `plumbline status` prints).
#[derive(Debug, Clone, Default, Serialize)]
pub struct HomeModel {
    /// The study's name.
    pub name: String,
    /// Rows per table.
    pub counts: StudyCounts,
    /// The active scale, once the study has one.
    pub scale: Option<String>,
    /// The pooling depth k.
    pub depth: usize,
    /// Pairs in the depth-k pool (every ranker's top k, each pair once).
    pub pool_size: usize,
    /// Pool pairs with a level scoring uses on the active scale: a panel member's level
    /// or a settled grade in force (can't-judge alone does not count), the pairs `score`
    /// counts as judged.
    pub pool_graded: usize,
    /// Coverage per ranker.
    pub coverage: Vec<Coverage>,
    /// Progress per reviewer.
    pub reviewers: Vec<ReviewerProgress>,
    /// Whether the study is open read-only.
    pub read_only: bool,
    /// The running pilot, when one runs (absent otherwise).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub pilot: Option<PilotSummary>,
    /// In a reviewer's copy: whom it was handed out to (absent for a lead's study).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub copy_for: Option<String>,
    /// The human sample on the active scale, once `plumbline sample` has drawn one
    /// (absent before).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub sample: Option<crate::analysis::scoring::human_sample::SampleStatus>,
}

impl HomeModel {
    /// The study's title as every screen shows it: a reviewer's copy says so, so it is
    /// never taken for the lead's study.
    pub fn title(&self) -> String {
        match &self.copy_for {
            Some(reviewer) => format!("{} — copy for {reviewer}", self.name),
            None => self.name.clone(),
        }
    }
}

/// Home as the screen and `plumbline status` show it, from one read of the study.
pub fn of_study(study: &Study) -> Result<HomeModel, StudyError> {
    study.read_together(|study| {
        let snapshot = study.snapshot()?;
        let queues = match snapshot.scales.get(snapshot.active_scale_index()) {
            Some(scale) => study.queue_progress(&scale.name)?,
            None => Vec::new(),
        };
        let mut model = build(
            &snapshot,
            &queues,
            study.counts_beside(&snapshot)?,
            study.is_read_only(),
        );
        model.pilot = study.pilot_status()?.map(|status| PilotSummary {
            reviewers: status.shares.len(),
            graded: status.shares.iter().map(|s| s.graded).sum(),
            needed: status
                .shares
                .iter()
                .map(|s| s.pairs * status.scales.len())
                .sum(),
            scales: status.scales,
        });
        model.copy_for = study
            .setting(crate::study::settings::keys::HANDED_OUT_TO)?
            .filter(|r| !r.is_empty());
        let draws = study.sample_draws()?;
        if !draws.is_empty() && !snapshot.scales.is_empty() {
            let scale = snapshot.active_scale_index();
            model.sample = Some(crate::analysis::scoring::human_sample::status(
                &snapshot, &draws, scale,
            ));
        }
        Ok(model)
    })
}

/// Home as plain text: counts, pool coverage, reviewers and the next step.
pub fn text(model: &HomeModel) -> String {
    let c = &model.counts;
    let mut out = format!(
        "Study {}{}\n{} items · {} contexts · {} rankers ({} ranked entries) · {} scales · {} reviewers · {} grades in force ({} history rows)\n",
        model.title(),
        if model.read_only { " (read-only)" } else { "" },
        c.items,
        c.contexts,
        c.rankers,
        c.ranked_items,
        c.scales,
        c.reviewers,
        c.current_grades,
        c.grade_events
    );
    let percent = |done: usize, total: usize| match total {
        0 => "–".to_string(),
        t => format!("{:.0} %", 100.0 * done as f64 / t as f64),
    };
    if let Some(scale) = &model.scale {
        out.push_str(&format!(
            "\nPool coverage on {scale} (top {}): {} of {} pairs graded ({})\n",
            model.depth,
            model.pool_graded,
            model.pool_size,
            percent(model.pool_graded, model.pool_size)
        ));
        for cov in &model.coverage {
            out.push_str(&format!(
                "  {:<16} {} of {} ({})\n",
                cov.ranker,
                cov.graded,
                cov.pairs,
                percent(cov.graded, cov.pairs)
            ));
        }
        if let Some(sample) = &model.sample {
            out.push_str(&format!(
                "\n{}\n",
                crate::analysis::scoring::human_sample::status_line(sample, scale)
            ));
        }
        out.push_str(&format!("\nReviewers on {scale}\n"));
        for r in &model.reviewers {
            let queue = match r.queue {
                Some((done, total)) => format!("queue {done} of {total}"),
                None => "no queue yet".to_string(),
            };
            let kind = if r.machine { " (machine judge)" } else { "" };
            out.push_str(&format!(
                "  {:<16} {} pairs graded{kind}, {queue}\n",
                r.reviewer, r.grades
            ));
        }
    }
    if let Some(p) = &model.pilot {
        out.push_str(&format!("\n{}\n", pilot_line(p)));
    }
    out.push_str(&format!("\nNext: {}\n", next_step(model)));
    out
}

/// Builds Home from one snapshot, the queues' progress on the active scale and the
/// study's row counts.
pub fn build(
    snapshot: &Snapshot,
    queues: &[QueueProgress],
    counts: StudyCounts,
    read_only: bool,
) -> HomeModel {
    let depth = snapshot.pool_depth;
    let scale = (!snapshot.scales.is_empty()).then(|| snapshot.active_scale_index());
    let judged = judged_pairs(snapshot, scale);
    let is_graded = |context: u32, item: u32| {
        judged
            .get(context as usize)
            .is_some_and(|pairs| pairs.binary_search_by_key(&item, |(i, _)| *i).is_ok())
    };
    let coverage = snapshot
        .lists
        .iter()
        .enumerate()
        .map(|(r, lists)| {
            let top = lists
                .iter()
                .enumerate()
                .flat_map(|(c, list)| list.iter().take(depth).map(move |&i| (c as u32, i)));
            let (graded, pairs) = top.fold((0, 0), |(graded, pairs), (c, i)| {
                (graded + usize::from(is_graded(c, i)), pairs + 1)
            });
            Coverage {
                ranker: snapshot.rankers[r].clone(),
                graded,
                pairs,
            }
        })
        .collect();
    // The pool is the union of every ranker's top k per context (`core::pooling`).
    let lists: Vec<(u32, Vec<u32>)> = snapshot
        .lists
        .iter()
        .flat_map(|lists| {
            lists
                .iter()
                .enumerate()
                .filter(|(_, l)| !l.is_empty())
                .map(|(c, l)| (c as u32, l[..l.len().min(depth)].to_vec()))
        })
        .collect();
    let pool = depth_pool(&lists, depth);
    let pool_graded = pool.iter().filter(|(c, i)| is_graded(*c, *i)).count();
    let reviewers = reviewer_progress(snapshot, queues, scale);
    HomeModel {
        name: snapshot.name.clone(),
        counts,
        scale: scale.map(|s| snapshot.scales[s].name.clone()),
        depth,
        pool_size: pool.len(),
        pool_graded,
        coverage,
        reviewers,
        read_only,
        pilot: None,
        copy_for: None,
        sample: None,
    }
}

/// Each reviewer's grades on the active scale and place in their queue.
fn reviewer_progress(
    snapshot: &Snapshot,
    queues: &[QueueProgress],
    scale: Option<usize>,
) -> Vec<ReviewerProgress> {
    // One pass over the grades. A machine judge's grades are kept apart from the
    // panel's: count them there.
    let mut grades = vec![0usize; snapshot.reviewers.len()];
    for (source, machines) in [(&snapshot.grades, false), (&snapshot.machine_grades, true)] {
        for g in source.iter().filter(|g| Some(g.scale as usize) == scale) {
            if snapshot.is_machine(g.reviewer as usize) == machines {
                grades[g.reviewer as usize] += 1;
            }
        }
    }
    snapshot
        .reviewers
        .iter()
        .enumerate()
        .map(|(r, name)| ReviewerProgress {
            reviewer: name.clone(),
            machine: snapshot.is_machine(r),
            grades: grades[r],
            queue: queues
                .iter()
                .find(|q| &q.reviewer == name)
                .map(|q| (q.done, q.total)),
        })
        .collect()
}

/// Pairs scoring has a level for on `scale`: a panel member's level or a settled grade
/// in force (`judgments::resolve`, the scoreboard's own rule), so Home and `status`
/// count as graded exactly what `score` counts as judged. A pair with only can't-judge
/// grades is not graded; a pair settled without any reviewer's grade is.
fn judged_pairs(snapshot: &Snapshot, scale: Option<usize>) -> judgments::ContextJudgments {
    match scale {
        Some(scale) => judgments::resolve(snapshot, scale, &GradeSource::Panel),
        None => Vec::new(),
    }
}

/// The running pilot in one sentence.
pub fn pilot_line(p: &PilotSummary) -> String {
    format!(
        "Pilot running on {} ({} reviewers, each in their own block order): {} of {} pilot grades given.",
        p.scales.join(" and "),
        p.reviewers,
        p.graded,
        p.needed
    )
}

/// What to do next, in one sentence, from what the study holds.
pub fn next_step(model: &HomeModel) -> String {
    let c = &model.counts;
    if c.items == 0 || c.contexts == 0 {
        "Import a catalog on the Catalog screen: items.csv and contexts.csv.".into()
    } else if c.rankers == 0 {
        "Import the rankers' lists on the Catalog screen: rankings.csv.".into()
    } else if c.scales == 0 {
        "Define a graded scale: import scales.csv on the Catalog screen.".into()
    } else if let Some(p) = model.pilot.as_ref().filter(|p| p.graded < p.needed) {
        format!(
            "Finish the pilot on the Grading desk ({} pilot grades to go), then compare the scales on the Scale trial.",
            p.needed - p.graded
        )
    } else if let Some(r) = model
        .reviewers
        .iter()
        .find(|r| r.queue.is_some_and(|(done, total)| done < total))
        .filter(|_| model.pool_graded == model.pool_size)
    {
        let (done, total) = r.queue.unwrap_or_default();
        format!(
            "Every pool pair has a grade; queues are still open ({} has {} of {total} to go). Shared pairs graded by everyone make agreement measurable: keep grading on the Grading desk.",
            r.reviewer,
            total - done
        )
    } else if model.pool_graded < model.pool_size {
        format!(
            "Grade the pool on the Grading desk: {} of {} pairs still have no grade.",
            model.pool_size - model.pool_graded,
            model.pool_size
        )
    } else {
        "The pool is graded: check agreement and settle disagreements on the Agreement screen, then compare the rankers on the Scoreboard.".into()
    }
}
