//! Shared fixtures: a tiny hand-written catalog in a temporary folder.
#![allow(dead_code)]

use std::path::{Path, PathBuf};

use plumbline::study::Study;
use plumbline::study::import::{self, ImportSet, Source};

pub const ITEMS: &str = "item_id,title,category,price,image,new,weight_g\n\
i1,Pine Dome Tent,tents,199.00,images/i1.png,false,1800\n\
i2,Reed Trail Tent,tents,149.50,,true,2100\n\
i3,Cove Sleeping Bag,sleeping bags,89.90,,false,900\n\
i4,Ember Stove,stoves,39.00,,true,300\n";

pub const CONTEXTS: &str = "context_id,kind,text,anchor_item_id,segment\n\
q1,query,two person tent,,head\n\
q2,query,warm sleeping bag,,tail\n\
a1,anchor,,i1,anchor\n";

pub const SCALES: &str = "scale,value,label,gain,key,rubric\n\
fit,0,Off target,,0,Unrelated.\n\
fit,1,Loosely related,,1,Same area.\n\
fit,2,Spot on,,2,Exactly it.\n";

pub const RANKINGS: &str = "ranker,context_id,item_id,rank\n\
base,q1,i1,1\nbase,q1,i2,2\nbase,q1,i3,3\n\
cand,q1,i2,1\ncand,q1,i1,2\ncand,q1,i4,3\n\
base,q2,i3,1\nbase,q2,i1,2\n\
cand,q2,i3,1\ncand,q2,i4,2\n";

pub const GRADES: &str = "reviewer,context_id,item_id,scale,value,reason,seconds,graded_at,note\n\
ann,q1,i1,fit,2,,4.5,2026-11-16T09:00:00Z,\n\
ann,q1,i2,fit,1,,3.0,2026-11-16T09:00:05Z,\n\
ann,q1,i3,fit,0,,2.0,2026-11-16T09:00:09Z,\n\
bo,q1,i1,fit,2,,5.0,2026-11-16T10:00:00Z,\n\
bo,q1,i2,fit,2,,6.0,2026-11-16T10:00:07Z,\n\
bo,q1,i4,fit,,image missing,1.0,2026-11-16T10:00:09Z,\n\
ann,q2,i3,fit,2,,4.0,2026-11-16T09:01:00Z,\n\
ann,q2,i1,fit,0,,2.0,2026-11-16T09:01:04Z,\n";

pub struct Fixture {
    pub dir: tempfile::TempDir,
}

impl Fixture {
    pub fn new() -> Fixture {
        let dir = tempfile::tempdir().expect("temp dir");
        for (name, text) in [
            ("items.csv", ITEMS),
            ("contexts.csv", CONTEXTS),
            ("scales.csv", SCALES),
            ("rankings.csv", RANKINGS),
            ("grades.csv", GRADES),
        ] {
            std::fs::write(dir.path().join(name), text).unwrap();
        }
        Fixture { dir }
    }

    pub fn path(&self, name: &str) -> PathBuf {
        self.dir.path().join(name)
    }

    pub fn write(&self, name: &str, text: &str) -> PathBuf {
        let p = self.path(name);
        std::fs::write(&p, text).unwrap();
        p
    }

    /// A new study with the whole fixture imported.
    pub fn study(&self) -> (PathBuf, Study) {
        let path = self.path("s.plumb");
        let mut study = Study::create(&path).unwrap();
        import::import(&mut study, &self.full_set()).unwrap();
        (path, study)
    }

    pub fn full_set(&self) -> ImportSet {
        let src = |n: &str| Some(Source::from_path(&self.path(n)).unwrap());
        ImportSet {
            items: src("items.csv"),
            contexts: src("contexts.csv"),
            rankings: src("rankings.csv"),
            scales: src("scales.csv"),
            grades: src("grades.csv"),
            gold: None,
        }
    }
}

/// Bytes of a file, for "unchanged" checks.
pub fn file_bytes(path: &Path) -> Vec<u8> {
    std::fs::read(path).unwrap()
}

/// A digest of everything a study holds, to prove an import changed nothing.
pub fn study_dump(study_path: &Path) -> String {
    let conn = rusqlite::Connection::open(study_path).unwrap();
    let mut out = String::new();
    for table in [
        "items",
        "contexts",
        "rankers",
        "ranked_items",
        "scales",
        "levels",
        "reviewers",
        "grade_events",
        "current_grades",
        "settle_events",
    ] {
        let cols = conn
            .prepare(&format!("SELECT * FROM {table}"))
            .unwrap()
            .column_count();
        let order: Vec<String> = (1..=cols).map(|c| c.to_string()).collect();
        let mut stmt = conn
            .prepare(&format!(
                "SELECT * FROM {table} ORDER BY {}",
                order.join(", ")
            ))
            .unwrap();
        let rows = stmt
            .query_map([], |r| {
                Ok((0..cols)
                    .map(|i| format!("{:?}", r.get_ref(i).unwrap()))
                    .collect::<Vec<_>>()
                    .join("|"))
            })
            .unwrap();
        for row in rows {
            out.push_str(table);
            out.push(':');
            out.push_str(&row.unwrap());
            out.push('\n');
        }
    }
    out
}
