//! Which items carry gain and which contexts count: one setting of every score.

use serde::{Deserialize, Serialize};

/// Which items carry gain, and which contexts count.
#[derive(Debug, Clone, PartialEq, Eq, Serialize, Deserialize)]
pub enum Segment {
    /// Every item carries gain and every context counts.
    All,
    /// Only new items carry gain (in DCG and the ideal), over contexts with a relevant new item.
    New,
    /// Only established (not new) items carry gain.
    Established,
    /// Only contexts of this kind (`query` or `anchor`).
    Kind(String),
    /// Only contexts with this segment label.
    ContextSegment(String),
}

impl Segment {
    /// Reads `all`, `new`, `established`, `query` or `anchor`; any other text (with an
    /// optional `label:` or `segment:` prefix) is a context segment label.
    pub fn parse(text: &str) -> Segment {
        match text {
            "all" => Segment::All,
            "new" => Segment::New,
            "established" => Segment::Established,
            "query" | "anchor" => Segment::Kind(text.to_string()),
            // `label:NAME` always means a context segment label, even one literally
            // called "new", "query" or "all"; `segment:NAME` is the older spelling.
            other => Segment::ContextSegment(
                other
                    .strip_prefix("label:")
                    .or_else(|| other.strip_prefix("segment:"))
                    .unwrap_or(other)
                    .to_string(),
            ),
        }
    }

    /// The segment as [`Segment::parse`] reads it back; a context segment label is written
    /// `segment:NAME`.
    pub fn label(&self) -> String {
        match self {
            Segment::All => "all".into(),
            Segment::New => "new".into(),
            Segment::Established => "established".into(),
            Segment::Kind(k) => k.clone(),
            Segment::ContextSegment(s) => format!("segment:{s}"),
        }
    }
}
