//! The desk's state machine, without egui: which card is shown, the presses waiting to
//! be applied, the one grade waiting for its acknowledgement, undo and back.
//!
//! Every press is applied on its own, in the order given, to the card that is shown
//! when its turn comes; a grade moves on to the next card only once the writer has
//! acknowledged it. Presses that arrive meanwhile wait in `presses`, so fast typing
//! gives one grade per press, each on the card it was meant for.

use std::collections::{HashMap, VecDeque};
use std::path::PathBuf;

use crate::core::scale::Scale;
use crate::study::cards::{ContextCard, ItemCard};
use crate::study::grades::{GradeAction, NewGrade};
use crate::study::queues::Mark;

pub const REASON_IMAGE: &str = "image missing";
pub const REASON_QUERY: &str = "unclear query";

/// The desk's view of one reviewer's queue on one scale.
pub struct DeskData {
    pub reviewer: String,
    pub scale: Scale,
    pub scale_names: Vec<String>,
    /// (context index, item index) per queue position.
    pub queue: Vec<(u32, u32)>,
    /// None = not graded yet; Some(mark) = the reviewer's current mark.
    pub marks: Vec<Option<Mark>>,
    pub items: Vec<ItemCard>,
    pub contexts: Vec<ContextCard>,
    pub item_index: HashMap<String, u32>,
    pub catalog_dir: Option<PathBuf>,
    /// Grades and seconds before this session, for the pace.
    pub past_grades: u64,
    pub past_seconds: f64,
    /// Only for a reviewer in training: gold pairs by (context, item) with their known
    /// level and rationale, shown after the reviewer grades one.
    pub training_gold: HashMap<(u32, u32), (u8, String)>,
    /// During a pilot: (this block's number from 1, how many blocks); the queue is then
    /// the block's pairs only.
    pub pilot_block: Option<(usize, usize)>,
}

/// What a reviewer in training sees after grading a gold pair.
#[derive(Debug, Clone, PartialEq)]
pub struct GoldFeedback {
    /// The level given; None for can't judge.
    pub given: Option<u8>,
    /// The known level.
    pub known: u8,
    pub rationale: String,
}

impl DeskData {
    pub fn done(&self) -> usize {
        self.marks.iter().filter(|m| m.is_some()).count()
    }

    /// The first ungraded position at or after `from`, wrapping around.
    pub fn next_open(&self, from: usize) -> Option<usize> {
        let n = self.queue.len();
        (0..n)
            .map(|k| (from + k) % n)
            .find(|&p| self.marks[p].is_none())
    }
}

/// What a key means on the desk, besides the level it may give.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum KeyRole {
    CantJudge,
    Skip,
    Back,
    Undo,
    Note,
    /// I, Q and O: reasons in the can't-judge form.
    ReasonImage,
    ReasonQuery,
    ReasonOther,
    Cancel,
    None,
}

/// One thing the reviewer did, in the order done.
#[derive(Debug, Clone, PartialEq)]
pub enum Press {
    /// A key without modifiers; its meaning depends on the form open when it is applied.
    Key {
        level: Option<u8>,
        role: KeyRole,
    },
    /// Ctrl+Z (Cmd+Z).
    UndoChord,
    /// A button: unambiguous.
    Grade(u8),
    CantJudge(String),
    OpenCantJudge,
    CloseCantJudge,
    Skip,
    Back,
    Undo,
}

/// A grade sent to the writer and not yet acknowledged.
#[derive(Debug, Clone)]
pub struct InFlight {
    pub ticket: u64,
    pub position: usize,
    pub grade: NewGrade,
    /// The last failure, shown while the writer retries.
    pub error: Option<String>,
}

/// The state between frames.
pub struct DeskState {
    pub data: DeskData,
    /// Queue position of the card on screen.
    pub current: Option<usize>,
    /// Seconds the current card has been visible with the window focused.
    pub shown_for: f64,
    pub note: String,
    pub cant_judge_open: bool,
    pub other_reason: String,
    /// One-shot requests to the drawing code.
    pub focus_note: bool,
    pub focus_other: bool,
    /// Positions graded this session, newest last (for undo).
    pub undo_stack: Vec<usize>,
    /// Positions left by skip or grade, newest last (for back).
    pub trail: Vec<usize>,
    pub presses: VecDeque<Press>,
    pub in_flight: Option<InFlight>,
    pub session_grades: u64,
    pub session_seconds: f64,
    /// Feedback on the gold pair just graded (training only), until the next grade.
    pub feedback: Option<GoldFeedback>,
    /// The grade the last undo removed: (queue position, the mark it had), until the
    /// next grade is saved.
    pub undone: Option<(usize, Mark)>,
    next_ticket: u64,
}

impl DeskState {
    pub fn new(data: DeskData) -> DeskState {
        let current = data.next_open(0);
        DeskState {
            data,
            current,
            shown_for: 0.0,
            note: String::new(),
            cant_judge_open: false,
            other_reason: String::new(),
            focus_note: false,
            focus_other: false,
            undo_stack: Vec::new(),
            trail: Vec::new(),
            presses: VecDeque::new(),
            in_flight: None,
            session_grades: 0,
            session_seconds: 0.0,
            feedback: None,
            undone: None,
            next_ticket: 1,
        }
    }

    /// Grades per hour over this reviewer's recorded time on the scale.
    pub fn pace_per_hour(&self) -> Option<f64> {
        let grades = self.data.past_grades + self.session_grades;
        let seconds = self.data.past_seconds + self.session_seconds;
        crate::analysis::agreement::panel_review::grades_per_hour(grades, seconds)
    }

    /// Adds visible time to the card on screen.
    pub fn tick(&mut self, seconds: f64) {
        if self.in_flight.is_none() {
            self.shown_for += seconds.clamp(0.0, 600.0);
        }
    }

    pub fn push(&mut self, press: Press) {
        self.presses.push_back(press);
    }

    /// Applies waiting presses in order until one needs the writer; returns the grade to
    /// send, if any. Call again after each acknowledgement.
    pub fn run(&mut self) -> Option<(u64, NewGrade)> {
        while self.in_flight.is_none() {
            let press = self.presses.pop_front()?;
            if let Some(write) = self.apply(press) {
                return Some(write);
            }
        }
        None
    }

    fn apply(&mut self, press: Press) -> Option<(u64, NewGrade)> {
        let action = match press {
            Press::Key { level, role } => self.meaning(level, role)?,
            other => other,
        };
        match action {
            Press::Grade(v) => self.commit(GradeAction::Grade(v)),
            Press::CantJudge(reason) => self.commit(GradeAction::CantJudge { reason }),
            Press::OpenCantJudge => {
                self.cant_judge_open = self.current.is_some();
                None
            }
            Press::CloseCantJudge => {
                self.close_form();
                None
            }
            Press::Skip => {
                self.skip();
                None
            }
            Press::Back => {
                self.back();
                None
            }
            Press::Undo | Press::UndoChord => self.undo(),
            Press::Key { .. } => None,
        }
    }

    /// What a key means now (with the can't-judge form open or not).
    fn meaning(&mut self, level: Option<u8>, role: KeyRole) -> Option<Press> {
        if self.cant_judge_open {
            return match role {
                KeyRole::ReasonImage => Some(Press::CantJudge(REASON_IMAGE.into())),
                KeyRole::ReasonQuery => Some(Press::CantJudge(REASON_QUERY.into())),
                KeyRole::ReasonOther => {
                    self.focus_other = true;
                    None
                }
                KeyRole::Cancel => Some(Press::CloseCantJudge),
                _ => None,
            };
        }
        if let Some(v) = level {
            return Some(Press::Grade(v));
        }
        match role {
            KeyRole::CantJudge => Some(Press::OpenCantJudge),
            KeyRole::Skip => Some(Press::Skip),
            KeyRole::Back => Some(Press::Back),
            KeyRole::Undo => Some(Press::Undo),
            KeyRole::Note => {
                self.focus_note = true;
                None
            }
            _ => None,
        }
    }

    fn close_form(&mut self) {
        self.cant_judge_open = false;
        self.other_reason.clear();
        self.focus_other = false;
    }

    fn reset_card(&mut self) {
        self.shown_for = 0.0;
        self.note.clear();
        self.close_form();
    }

    fn commit(&mut self, action: GradeAction) -> Option<(u64, NewGrade)> {
        let position = self.current?;
        self.send(position, action)
    }

    fn send(&mut self, position: usize, action: GradeAction) -> Option<(u64, NewGrade)> {
        let (c, i) = self.data.queue[position];
        let undo = matches!(action, GradeAction::Undo);
        let grade = NewGrade {
            reviewer: self.data.reviewer.clone(),
            context_id: self.data.contexts[c as usize].id.clone(),
            item_id: self.data.items[i as usize].id.clone(),
            scale: self.data.scale.name.clone(),
            action,
            seconds: if undo {
                0.0
            } else {
                (self.shown_for * 10.0).round() / 10.0
            },
            note: if undo {
                String::new()
            } else {
                self.note.trim().to_string()
            },
        };
        let ticket = self.next_ticket;
        self.next_ticket += 1;
        self.in_flight = Some(InFlight {
            ticket,
            position,
            grade: grade.clone(),
            error: None,
        });
        Some((ticket, grade))
    }

    /// The writer saved the grade with `ticket`: show the next card.
    pub fn saved(&mut self, ticket: u64) {
        let Some(flight) = self.in_flight.take_if(|f| f.ticket == ticket) else {
            return;
        };
        let position = flight.position;
        match &flight.grade.action {
            GradeAction::Undo => {
                let removed = self.data.marks[position].take().flatten();
                self.undone = Some((position, removed));
                self.current = Some(position);
            }
            action => {
                let given = match action {
                    GradeAction::Grade(v) => Some(*v),
                    _ => None,
                };
                self.data.marks[position] = Some(given);
                self.undone = None;
                self.feedback =
                    self.data
                        .training_gold
                        .get(&self.data.queue[position])
                        .map(|(known, why)| GoldFeedback {
                            given,
                            known: *known,
                            rationale: why.clone(),
                        });
                self.session_grades += 1;
                self.session_seconds += flight.grade.seconds;
                self.undo_stack.push(position);
                self.trail.push(position);
                self.current = self.data.next_open(position + 1);
            }
        }
        self.reset_card();
    }

    /// The writer could not save yet and keeps trying.
    pub fn failed(&mut self, ticket: u64, error: String) {
        if let Some(f) = self.in_flight.as_mut().filter(|f| f.ticket == ticket) {
            f.error = Some(error);
        }
    }

    fn skip(&mut self) {
        let Some(p) = self.current else { return };
        if let Some(n) = self.data.next_open(p + 1).filter(|&n| n != p) {
            self.trail.push(p);
            self.current = Some(n);
            self.reset_card();
        }
    }

    fn back(&mut self) {
        if let Some(p) = self.trail.pop() {
            self.current = Some(p);
            self.reset_card();
        }
    }

    /// What the last undo removed, in words: the level (or can't judge), the context
    /// and the item, so the reviewer knows which grade is gone.
    pub fn undo_notice(&self) -> Option<String> {
        let (position, removed) = self.undone?;
        let (c, i) = self.data.queue[position];
        let context = &self.data.contexts[c as usize];
        let what = if context.text.is_empty() {
            context.id.clone()
        } else {
            format!("“{}”", context.text)
        };
        let item = &self.data.items[i as usize].title;
        let grade = match removed {
            Some(v) => format!("your grade {v} ({})", self.data.scale.label(v)),
            None => "your can't-judge mark".to_string(),
        };
        Some(format!(
            "Undone: {grade} for {item} on {what}. The pair is back on the desk to grade again."
        ))
    }

    fn undo(&mut self) -> Option<(u64, NewGrade)> {
        let p = self.undo_stack.pop()?;
        self.trail.retain(|&t| t != p);
        self.send(p, GradeAction::Undo)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::core::scale::preset;

    fn state(n: usize) -> DeskState {
        let items: Vec<ItemCard> = (0..n)
            .map(|i| ItemCard {
                id: format!("i{i}"),
                ..Default::default()
            })
            .collect();
        DeskState::new(DeskData {
            reviewer: "r".into(),
            scale: preset(4).unwrap(),
            scale_names: vec![],
            queue: (0..n as u32).map(|i| (0, i)).collect(),
            marks: vec![None; n],
            item_index: HashMap::new(),
            items,
            contexts: vec![ContextCard {
                id: "c".into(),
                ..Default::default()
            }],
            catalog_dir: None,
            past_grades: 0,
            past_seconds: 0.0,
            training_gold: HashMap::new(),
            pilot_block: None,
        })
    }

    #[test]
    fn a_reviewer_in_training_sees_the_gold_level_after_grading_it_and_only_then() {
        let mut s = state(3);
        s.data
            .training_gold
            .insert((0, 1), (2, "Fits, one flaw.".into()));
        s.push(key(3));
        drain(&mut s);
        assert_eq!(s.feedback, None, "an ordinary pair says nothing");
        s.push(key(1));
        drain(&mut s);
        assert_eq!(
            s.feedback,
            Some(GoldFeedback {
                given: Some(1),
                known: 2,
                rationale: "Fits, one flaw.".into()
            })
        );
        s.push(key(0));
        drain(&mut s);
        assert_eq!(s.feedback, None, "gone with the next grade");
    }

    fn key(v: u8) -> Press {
        Press::Key {
            level: Some(v),
            role: KeyRole::None,
        }
    }

    /// Acknowledges every write as the writer would, collecting (item, value).
    fn drain(s: &mut DeskState) -> Vec<(String, Option<u8>)> {
        let mut out = Vec::new();
        while let Some((ticket, grade)) = s.run() {
            out.push((
                grade.item_id.clone(),
                match grade.action {
                    GradeAction::Grade(v) => Some(v),
                    _ => None,
                },
            ));
            s.saved(ticket);
        }
        out
    }

    #[test]
    fn every_press_grades_the_next_card_in_order() {
        let mut s = state(25);
        let values: Vec<u8> = (0..20).map(|k| [3, 1, 2, 0][k % 4]).collect();
        for &v in &values {
            s.push(key(v));
        }
        let written = drain(&mut s);
        assert_eq!(written.len(), 20);
        for (k, (item, value)) in written.iter().enumerate() {
            assert_eq!(item, &format!("i{k}"));
            assert_eq!(*value, Some(values[k]));
        }
    }

    #[test]
    fn presses_wait_while_a_grade_is_unacknowledged() {
        let mut s = state(5);
        s.push(key(3));
        let (ticket, first) = s.run().unwrap();
        s.push(key(1));
        assert!(
            s.run().is_none(),
            "nothing moves before the acknowledgement"
        );
        assert_eq!(s.current, Some(0), "the card stays until saved");
        s.failed(ticket, "busy".into());
        assert!(s.run().is_none());
        s.saved(ticket);
        assert_eq!(first.item_id, "i0");
        let (_, second) = s.run().unwrap();
        assert_eq!(second.item_id, "i1");
        assert_eq!(second.action, GradeAction::Grade(1));
    }

    #[test]
    fn can_t_judge_keys_mean_reasons_only_in_the_form() {
        let mut s = state(3);
        s.push(Press::Key {
            level: None,
            role: KeyRole::CantJudge,
        });
        s.push(Press::Key {
            level: Some(1),
            role: KeyRole::ReasonImage,
        });
        s.push(Press::Key {
            level: Some(1),
            role: KeyRole::ReasonImage,
        });
        let (t, g) = s.run().unwrap();
        assert_eq!(
            g.action,
            GradeAction::CantJudge {
                reason: REASON_IMAGE.into()
            }
        );
        s.saved(t);
        let (_, g) = s.run().unwrap();
        assert_eq!(g.action, GradeAction::Grade(1), "form closed: the level");
    }

    #[test]
    fn undo_brings_back_the_last_graded_card() {
        let mut s = state(3);
        s.push(key(2));
        s.push(Press::UndoChord);
        let written = drain(&mut s);
        assert_eq!(written, vec![("i0".into(), Some(2)), ("i0".into(), None)]);
        assert_eq!(s.current, Some(0));
        assert_eq!(s.data.marks[0], None);
        // The desk says which grade went: level 2 of the preset four-level scale.
        s.data.items[0].title = "Reed Trail Tent".into();
        let label = s.data.scale.label(2).to_string();
        assert_eq!(
            s.undo_notice().unwrap(),
            format!(
                "Undone: your grade 2 ({label}) for Reed Trail Tent on c. The pair is back on the desk to grade again."
            )
        );
        s.push(key(1));
        drain(&mut s);
        assert_eq!(s.undo_notice(), None, "a new grade clears the notice");
    }
}
