//! The Agreement screen's view model: panel coefficients (`agreement`), the panel review
//! (`panel_review`) and the blind rule, from one read of the study.

use std::collections::{BTreeMap, HashSet};

use crate::analysis::agreement::panel_review::{self, PanelReview};
use crate::analysis::agreement::{self, AgreementReport, ReviewerPair};
use crate::core::scale::Scale;
use crate::study::cards::ItemCard;
use crate::study::settle::GradeDetail;
use crate::study::snapshot::Snapshot;
use crate::study::{Study, StudyError};

/// What to compute: the scale and collapse map picked on screen, and who is looking.
#[derive(Debug, Clone, Default, PartialEq, serde::Serialize)]
pub struct AgreementRequest {
    /// The scale asked for; `None` = the active scale.
    pub scale: Option<String>,
    /// A saved collapse map of that scale to apply first.
    pub collapse: Option<String>,
    /// The signed-in reviewer; the blind rule hides pairs they still have to grade.
    pub viewer: Option<String>,
}

/// Everything the screen shows, computed off the UI thread.
#[derive(Debug, Clone, serde::Serialize)]
pub struct AgreementModel {
    /// What was computed, with the scale filled in.
    pub request: AgreementRequest,
    /// The scale with its levels.
    pub scale: Scale,
    /// Every scale of the study, for the selector.
    pub scale_names: Vec<String>,
    /// Collapse maps saved for this scale.
    pub collapse_names: Vec<String>,
    /// Pairwise and panel coefficients (as `plumbline agree` prints them).
    pub report: AgreementReport,
    /// Level use, gold accuracy, drift and the disagreements to settle.
    pub review: PanelReview,
    /// Pairs left out because the viewer has not graded them yet (blind rule).
    pub hidden_pairs: usize,
    /// Whether the study is open read-only (settling is then off).
    pub read_only: bool,
    /// Reviewers in training (they see a gold pair's level after grading it).
    pub training_reviewers: Vec<String>,
    /// Whether machine judges' grades count in the panel.
    pub machines_in_panel: bool,
    /// The study's panel rule for an unsettled pair (`panel_rule` setting).
    pub panel_rule: crate::core::panel_rule::PanelRule,
    /// Every settle event of the scale, oldest first (settlements, undos, batches).
    pub settle_history: Vec<crate::study::settle::SettleRecord>,
    /// The cards of every item in the disagreements and of every anchor item, so the
    /// pair detail can show pictures and descriptions (not part of the view golden).
    #[serde(skip)]
    pub items: std::collections::BTreeMap<String, crate::study::queues::ItemCard>,
    /// Each anchor context's anchor item id.
    #[serde(skip)]
    pub anchors: std::collections::BTreeMap<String, String>,
    /// Where item pictures are found (None: the study names no catalog folder).
    #[serde(skip)]
    pub catalog_dir: Option<std::path::PathBuf>,
}

impl AgreementModel {
    /// True while the viewer still has ungraded pairs: settling waits until after grading.
    pub fn viewer_is_grading(&self) -> bool {
        self.hidden_pairs > 0
    }

    /// The coefficients of two reviewers, in either order.
    pub fn pair(&self, a: &str, b: &str) -> Option<&ReviewerPair> {
        self.report.pairs.iter().find(|p| {
            (p.reviewer_a == a && p.reviewer_b == b) || (p.reviewer_a == b && p.reviewer_b == a)
        })
    }
}

/// Builds the model from one read of the study (snapshot, grade details, settlements,
/// gold pairs and the viewer's pending pairs in one transaction); `Ok(None)` when the study
/// has no scale yet.
pub fn build(
    study: &Study,
    request: AgreementRequest,
) -> Result<Option<AgreementModel>, StudyError> {
    study.read_together(|study| build_in(study, request))
}

fn build_in(
    study: &Study,
    request: AgreementRequest,
) -> Result<Option<AgreementModel>, StudyError> {
    let mut snapshot = study.snapshot()?;
    if snapshot.scales.is_empty() {
        return Ok(None);
    }
    let scale = request
        .scale
        .as_deref()
        .and_then(|s| snapshot.scale_index(s))
        .unwrap_or_else(|| snapshot.active_scale_index());
    let scale_name = snapshot.scales[scale].name.clone();
    let maps: Vec<_> = study
        .collapse_maps()?
        .into_iter()
        .filter(|(s, _)| *s == scale_name)
        .map(|(_, m)| m)
        .collect();
    let collapse = request
        .collapse
        .as_deref()
        .and_then(|name| maps.iter().find(|m| m.name == name));
    let pending = match &request.viewer {
        Some(viewer) => study.pending_pairs(viewer, &scale_name)?,
        None => HashSet::new(),
    };
    let grades = review_grades(study, &mut snapshot, scale, &pending)?;
    let settled = study.settled_in_force(&scale_name)?;
    let gold = study.gold_pairs(&scale_name)?;
    let top_k = snapshot.pool_depth;
    let report = agreement::with_defaults(&snapshot, scale, collapse);
    let review = panel_review::build(&snapshot, scale, &grades, &settled, &gold, collapse, top_k);
    let settle_history = if pending.is_empty() {
        study.settle_history(&scale_name)?
    } else {
        // Blind rule: a reviewer with pending pairs sees no settled levels.
        Vec::new()
    };
    let (anchors, items) = disagreement_cards(study, &snapshot, &review)?;
    Ok(Some(AgreementModel {
        request: AgreementRequest {
            scale: Some(scale_name),
            collapse: collapse.map(|c| c.name.clone()),
            viewer: request.viewer,
        },
        scale: snapshot.scales[scale].clone(),
        scale_names: snapshot.scales.iter().map(|s| s.name.clone()).collect(),
        collapse_names: maps.iter().map(|m| m.name.clone()).collect(),
        report,
        review,
        hidden_pairs: pending.len(),
        read_only: study.is_read_only(),
        training_reviewers: study.settings()?.training_reviewers,
        machines_in_panel: snapshot.machines_in_panel,
        panel_rule: snapshot.panel_rule,
        settle_history,
        items,
        anchors,
        catalog_dir: study.catalog_dir()?,
    }))
}

/// The scale's grades for the panel review: machine judges out unless the study counts
/// them in, and under the blind rule every grade of the viewer's ungraded pairs out of
/// both the list and the snapshot.
fn review_grades(
    study: &Study,
    snapshot: &mut Snapshot,
    scale: usize,
    pending: &HashSet<(String, String)>,
) -> Result<Vec<GradeDetail>, StudyError> {
    let scale_name = snapshot.scales[scale].name.clone();
    let mut grades = study.grade_details(&scale_name)?;
    if !snapshot.machines_in_panel {
        // Machine judges are measured against the panel, never part of its review.
        grades.retain(|g| {
            snapshot
                .reviewer_index(&g.reviewer)
                .is_none_or(|r| !snapshot.is_machine(r))
        });
    }
    if !pending.is_empty() {
        // Blind rule: drop every grade of the viewer's ungraded pairs before computing
        // anything, so no number, list or detail can reveal the others' levels.
        grades.retain(|g| !pending.contains(&(g.context_id.clone(), g.item_id.clone())));
        let hidden: HashSet<(u32, u32)> = pending
            .iter()
            .filter_map(|(c, i)| {
                let c = snapshot.contexts.iter().position(|x| &x.id == c)?;
                let i = snapshot
                    .items
                    .binary_search_by(|x| x.id.as_str().cmp(i))
                    .ok()?;
                Some((c as u32, i as u32))
            })
            .collect();
        snapshot
            .grades
            .retain(|g| g.scale as usize != scale || !hidden.contains(&(g.context, g.item)));
    }
    Ok(grades)
}

/// Context id → its anchor item's id.
type Anchors = BTreeMap<String, String>;

/// Each context's anchor item, and the cards of the items the disagreements show.
fn disagreement_cards(
    study: &Study,
    snapshot: &Snapshot,
    review: &PanelReview,
) -> Result<(Anchors, BTreeMap<String, ItemCard>), StudyError> {
    let anchors: BTreeMap<String, String> = snapshot
        .contexts
        .iter()
        .filter_map(|c| Some((c.id.clone(), c.anchor_item.clone()?)))
        .collect();
    let items = study.item_cards_of(
        review
            .disagreements
            .iter()
            .map(|d| d.item_id.as_str())
            .chain(
                review
                    .disagreements
                    .iter()
                    .filter_map(|d| anchors.get(&d.context_id).map(String::as_str)),
            ),
    )?;
    Ok((anchors, items))
}
