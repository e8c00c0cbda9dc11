//! Demo catalog for "Fennel Hollow Outfitters", an invented hiking and camping shop.
//!
//! Everything here is made up: the shop, items, queries, reviewers and grades. The data
//! is simulated from a small model rather than written by hand, so the numbers tell a
//! consistent story: every (context, item) pair gets a latent utility, rankers order
//! items by that utility seen through noise, and reviewers grade what they perceive.
//! One fixed seed and ordered collections make every run byte-identical.
//!
//! The word tables and the items and contexts built from them live in `words`, the
//! pictures in `pictograms`; this file holds the model and writes the catalog files.

use std::collections::{BTreeMap, BTreeSet};
use std::fs;
use std::io;
use std::path::Path;

use rand::{RngCore, SeedableRng};
use rand_chacha::ChaCha8Rng;

use super::pictograms::item_png;
use super::words::{CATS, Ctx, Item, NOTES, OTHER_REASONS, SCALES, build_contexts, build_items};

/// Fixed seed. The model gives the same story for most seeds; this one was picked
/// because its figures sit close to the typical ones.
mod machine;
mod readme;

pub(crate) use machine::MACHINE_JUDGE;

const SEED: u64 = 5;
const LIST_DEPTH: usize = 30;
const POOL_DEPTH: usize = 10;
const OVERLAP_SHARE: f64 = 0.30;
const PILOT_PAIRS: usize = 160;
const CANT_JUDGE: usize = 7;
const REVIEWERS: [&str; 3] = ["rev-amber", "rev-birch", "rev-cedar"];

/// Derives every random value straight from the ChaCha stream, so the output does
/// not depend on distribution code inside `rand`. Each phase gets its own stream,
/// so tuning one phase (say, images) leaves the others unchanged.
pub(super) struct Rng(ChaCha8Rng);

impl Rng {
    fn phase(n: u64) -> Self {
        Rng(ChaCha8Rng::seed_from_u64(
            SEED ^ n.wrapping_mul(0x9E37_79B9_7F4A_7C15),
        ))
    }
    pub(super) fn unit(&mut self) -> f64 {
        (self.0.next_u64() >> 11) as f64 / (1u64 << 53) as f64
    }
    pub(super) fn below(&mut self, n: usize) -> usize {
        (self.0.next_u64() % n as u64) as usize
    }
    pub(super) fn chance(&mut self, p: f64) -> bool {
        self.unit() < p
    }
    /// Standard normal via Box-Muller.
    pub(super) fn normal(&mut self) -> f64 {
        let u1 = self.unit().max(1e-12);
        let u2 = self.unit();
        (-2.0 * u1.ln()).sqrt() * (std::f64::consts::TAU * u2).cos()
    }
    pub(super) fn pick<'a, T>(&mut self, xs: &'a [T]) -> &'a T {
        &xs[self.below(xs.len())]
    }
    pub(super) fn shuffle<T>(&mut self, xs: &mut [T]) {
        for i in (1..xs.len()).rev() {
            xs.swap(i, self.below(i + 1));
        }
    }
}

// ---------------------------------------------------------------- latent relevance

/// Latent utility on a 0..3 scale; level boundaries sit halfway between integers.
fn level(u: f64) -> u8 {
    match u {
        ..0.5 => 0,
        ..1.5 => 1,
        ..2.5 => 2,
        _ => 3,
    }
}

fn closeness(a: f64, b: f64) -> f64 {
    (-2.0 * (a / b).ln().abs()).exp()
}

/// Anchors: same category and similar tags, weight and price score high.
/// Queries: the category sets the base, wanted tags lift it. Noise blurs both.
fn utility(c: &Ctx, it: &Item, items: &[Item], rng: &mut Rng) -> f64 {
    let n = rng.normal();
    if it.cat != c.cat {
        let wanted = c.wants.iter().filter(|w| it.tags.contains(w)).count() as f64;
        let stray = 0.35 * wanted / c.wants.len().max(1) as f64;
        return if Some(it.cat) == c.second {
            0.85 + 0.3 * n
        } else {
            stray + 0.2 * n
        };
    }
    if let Some(a) = c.anchor {
        let an = &items[a];
        let shared = it.tags.iter().filter(|t| an.tags.contains(t)).count() as f64;
        let jacc = 2.0 * shared / (it.tags.len() + an.tags.len()) as f64;
        let near_w = closeness(it.weight_g as f64, an.weight_g as f64);
        let near_p = closeness(it.price_cents as f64, an.price_cents as f64);
        return 1.2 + 1.9 * (0.5 * jacc + 0.25 * near_w + 0.25 * near_p) + 0.35 * n;
    }
    if c.wants.is_empty() {
        return 2.45 + 0.45 * n;
    }
    let matched = c.wants.iter().filter(|w| it.tags.contains(w)).count() as f64;
    1.2 + 1.75 * matched / c.wants.len() as f64 + 0.4 * n
}

// ---------------------------------------------------------------- rankers

/// A simulated ranker: it sees the latent utility through a shared blur (what any
/// ranker can observe about an item) plus its own noise, so differences between
/// rankers come mostly from their systematic traits rather than luck.
struct Ranker {
    name: &'static str,
    noise: f64,
    new_penalty: f64,
}

/// The production ranker the candidates are compared against.
pub const BASELINE_RANKER: &str = "lexical-prod";

const SHARED_NOISE: f64 = 0.40;
const RANKERS: [Ranker; 3] = [
    // Production baseline: new items have no interaction history and sink.
    Ranker {
        name: "lexical-prod",
        noise: 0.35,
        new_penalty: 1.6,
    },
    // Embedding candidate: blurrier on established items, blind to item age.
    Ranker {
        name: "embed-cand",
        noise: 0.45,
        new_penalty: 0.0,
    },
    // Hybrid candidate: a bit sharper, and content signals cover the cold start.
    Ranker {
        name: "hybrid-cand",
        noise: 0.32,
        new_penalty: 0.0,
    },
];

/// Top LIST_DEPTH item indices per ranker and context; an anchor never lists itself.
fn rank_all(
    ctxs: &[Ctx],
    items: &[Item],
    util: &[Vec<f64>],
    rng: &mut Rng,
) -> Vec<Vec<Vec<usize>>> {
    let shared: Vec<Vec<f64>> = util
        .iter()
        .map(|row| {
            row.iter()
                .map(|u| u + SHARED_NOISE * rng.normal())
                .collect()
        })
        .collect();
    let mut lists = Vec::new();
    for r in &RANKERS {
        let mut per_ctx = Vec::new();
        for (ci, c) in ctxs.iter().enumerate() {
            let mut scored: Vec<(f64, usize)> = Vec::new();
            for (i, it) in items
                .iter()
                .enumerate()
                .filter(|&(i, _)| Some(i) != c.anchor)
            {
                let penalty = if it.new { r.new_penalty } else { 0.0 };
                scored.push((shared[ci][i] + r.noise * rng.normal() - penalty, i));
            }
            scored.sort_by(|a, b| b.0.total_cmp(&a.0).then(a.1.cmp(&b.1)));
            per_ctx.push(scored.into_iter().take(LIST_DEPTH).map(|s| s.1).collect());
        }
        lists.push(per_ctx);
    }
    lists
}

// ---------------------------------------------------------------- grading

struct Grade {
    reviewer: usize,
    ctx: usize,
    item: usize,
    useful2: bool,
    value: Option<u8>,
    reason: &'static str,
    seconds: f64,
    at: u32,
    note: &'static str,
}

/// Reviewer bias in utility units; rev-cedar reads the rubric more strictly.
const REVIEWER_BIAS: [f64; 3] = [0.0, 0.05, 0.38];
const REVIEWER_NOISE: [f64; 3] = [0.37, 0.40, 0.37];

/// Who grades what: per reviewer a list of (pair, is useful2), plus the
/// can't-judge verdicts keyed by (reviewer, pair).
struct Plan {
    tasks: [Vec<(usize, bool)>; 3],
    cant_judge: BTreeMap<(usize, usize), &'static str>,
    overlap: usize,
    pilot: usize,
}

/// Shared pairs go to all three reviewers (the first PILOT_PAIRS of them also on
/// useful2); the rest are dealt out one reviewer each.
fn plan_grading(pairs: &[(usize, usize)], ctxs: &[Ctx], rng: &mut Rng) -> Plan {
    let mut order: Vec<usize> = (0..pairs.len()).collect();
    rng.shuffle(&mut order);
    let overlap = (pairs.len() as f64 * OVERLAP_SHARE).ceil() as usize;
    let pilot = PILOT_PAIRS.min(overlap);
    let mut tasks: [Vec<(usize, bool)>; 3] = Default::default();
    for (k, &p) in order.iter().enumerate() {
        if k >= overlap {
            tasks[(k - overlap) % 3].push((p, false));
            continue;
        }
        for t in tasks.iter_mut() {
            t.push((p, false));
            if k < pilot {
                t.push((p, true));
            }
        }
    }
    // Can't-judge verdicts only on shared pairs, so every pair keeps a real grade.
    // Tail queries get "unclear query" first; the rest cycle through the other reasons.
    let mut cand: Vec<usize> = order[..overlap].to_vec();
    rng.shuffle(&mut cand);
    cand.sort_by_key(|&p| ctxs[pairs[p].0].segment != "tail");
    let mut cant_judge = BTreeMap::new();
    for (k, &p) in cand.iter().take(CANT_JUDGE).enumerate() {
        let reason = if k < 2 {
            "unclear query"
        } else {
            OTHER_REASONS[k % OTHER_REASONS.len()]
        };
        cant_judge.insert((rng.below(3), p), reason);
    }
    Plan {
        tasks,
        cant_judge,
        overlap,
        pilot,
    }
}

/// Start of session `s` (two a day, Monday to Thursday), in seconds from the first morning.
fn session_start(s: usize, rng: &mut Rng) -> u32 {
    let day = (s / 2) as u32 * 86_400;
    let base = [9 * 3600, 13 * 3600 + 900][s % 2];
    day + base + rng.below(3600) as u32
}

/// Every grade of one reviewer, context by context, with the binary pilot last.
fn grade_as(
    r: usize,
    plan: &Plan,
    pairs: &[(usize, usize)],
    seen: &[[f64; 3]],
    util: &[Vec<f64>],
    rng: &mut Rng,
) -> Vec<Grade> {
    let mut ctx_pos: Vec<usize> = (0..util.len()).collect();
    rng.shuffle(&mut ctx_pos);
    let mut list: Vec<(bool, usize, u64, usize)> = plan.tasks[r]
        .iter()
        .map(|&(p, u)| (u, ctx_pos[pairs[p].0], rng.0.next_u64(), p))
        .collect();
    list.sort();
    let n = list.len();
    let mut clock = 0u32;
    let mut grades = Vec::new();
    for (k, &(useful2, _, _, p)) in list.iter().enumerate() {
        let session = 8 * k / n;
        if k == 0 || session != 8 * (k - 1) / n {
            clock = clock.max(session_start(session, rng));
        }
        let (ctx, item) = pairs[p];
        // Middle levels are harder to call, so they take longer.
        let hard = if matches!(level(util[ctx][item]), 1 | 2) {
            1.35
        } else {
            0.85
        };
        let median = if useful2 { 3.4 } else { 5.2 };
        // rev-birch drifts: from the third day on they grade most of a level more
        // strictly, which their gold pairs show day by day.
        let drift = if r == 1 && clock >= 2 * 86_400 {
            -0.8
        } else {
            0.0
        };
        let mut seconds = (median * hard * (0.45 * rng.normal()).exp()).max(0.8);
        let (mut value, mut reason, mut note) = (None, "", "");
        if useful2 {
            value = Some(u8::from(seen[p][r] + 0.15 * rng.normal() >= 1.5));
        } else if let Some(&why) = plan.cant_judge.get(&(r, p)) {
            seconds *= 2.5;
            reason = why;
        } else {
            value = Some(level(seen[p][r] + drift));
            if rng.chance(0.03) {
                note = *rng.pick(&NOTES);
            }
        }
        let seconds = (seconds * 10.0).round() / 10.0;
        clock += seconds.ceil() as u32 + 1 + rng.below(7) as u32;
        if rng.chance(0.02) {
            clock += 60 + rng.below(240) as u32;
        }
        grades.push(Grade {
            reviewer: r,
            ctx,
            item,
            useful2,
            value,
            reason,
            seconds,
            at: clock,
            note,
        });
    }
    grades
}

fn simulate_grades(
    pairs: &[(usize, usize)],
    ctxs: &[Ctx],
    util: &[Vec<f64>],
    rng: &mut Rng,
) -> (Vec<Grade>, Plan) {
    // Each reviewer's perceived utility for every pooled pair, drawn in a fixed order.
    let seen: Vec<[f64; 3]> = pairs
        .iter()
        .map(|&(c, i)| {
            std::array::from_fn(|r| {
                util[c][i] + REVIEWER_NOISE[r] * rng.normal() - REVIEWER_BIAS[r]
            })
        })
        .collect();
    let plan = plan_grading(pairs, ctxs, rng);
    let mut grades: Vec<Grade> = (0..3)
        .flat_map(|r| grade_as(r, &plan, pairs, &seen, util, rng))
        .collect();
    grades.sort_by_key(|g| (g.at, g.reviewer));
    (grades, plan)
}

// ---------------------------------------------------------------- CSV output

/// CSV text with RFC 4180 quoting where a field needs it.
struct Csv(String);

impl Csv {
    fn new(header: &str) -> Self {
        Csv(format!("{header}\n"))
    }
    fn row(&mut self, fields: &[&str]) {
        for (k, f) in fields.iter().enumerate() {
            if k > 0 {
                self.0.push(',');
            }
            if f.contains([',', '"', '\n', '\r']) {
                self.0 += &format!("\"{}\"", f.replace('"', "\"\""));
            } else {
                self.0 += f;
            }
        }
        self.0.push('\n');
    }
}

/// Day 0 is Monday 2026-11-16; grading stays within that week.
fn timestamp(t: u32) -> String {
    let (d, s) = (t / 86_400, t % 86_400);
    format!(
        "2026-11-{:02}T{:02}:{:02}:{:02}Z",
        16 + d,
        s / 3600,
        s / 60 % 60,
        s % 60
    )
}

fn items_csv(items: &[Item]) -> String {
    let mut csv = Csv::new("item_id,title,category,description,price,image,new,weight_g,capacity");
    for it in items {
        let price = format!("{}.{:02}", it.price_cents / 100, it.price_cents % 100);
        let image = format!("images/{}.png", it.id);
        let (new, weight) = (
            if it.new { "true" } else { "false" },
            it.weight_g.to_string(),
        );
        let cat = CATS[it.cat].name;
        csv.row(&[
            &it.id,
            &it.title,
            cat,
            &it.description,
            &price,
            &image,
            new,
            &weight,
            &it.capacity,
        ]);
    }
    csv.0
}

fn contexts_csv(ctxs: &[Ctx], items: &[Item]) -> String {
    let mut csv = Csv::new("context_id,kind,text,anchor_item_id,segment");
    for c in ctxs {
        let (kind, anchor) = match c.anchor {
            Some(a) => ("anchor", items[a].id.as_str()),
            None => ("query", ""),
        };
        csv.row(&[&c.id, kind, &c.text, anchor, c.segment]);
    }
    csv.0
}

fn rankings_csv(lists: &[Vec<Vec<usize>>], ctxs: &[Ctx], items: &[Item]) -> String {
    let mut csv = Csv::new("ranker,context_id,item_id,rank");
    for (ranker, per_ctx) in RANKERS.iter().zip(lists) {
        for (c, list) in ctxs.iter().zip(per_ctx) {
            for (k, &i) in list.iter().enumerate() {
                csv.row(&[ranker.name, &c.id, &items[i].id, &(k + 1).to_string()]);
            }
        }
    }
    csv.0
}

/// Values count up from 0 within each scale; the key is the value's digit and the
/// gain stays empty so the default exponential gains apply.
fn scales_csv() -> String {
    let mut csv = Csv::new("scale,value,label,gain,key,rubric");
    for (k, (scale, label, rubric)) in SCALES.iter().enumerate() {
        let value = SCALES[..k]
            .iter()
            .filter(|s| s.0 == *scale)
            .count()
            .to_string();
        csv.row(&[scale, &value, label, "", &value, rubric]);
    }
    csv.0
}

fn grades_csv(grades: &[Grade], ctxs: &[Ctx], items: &[Item]) -> String {
    let mut csv = Csv::new("reviewer,context_id,item_id,scale,value,reason,seconds,graded_at,note");
    for g in grades {
        let value = g.value.map(|v| v.to_string()).unwrap_or_default();
        let scale = if g.useful2 { "useful2" } else { "fit4" };
        let (ctx, item) = (&ctxs[g.ctx].id, &items[g.item].id);
        let (secs, at) = (format!("{:.1}", g.seconds), timestamp(g.at));
        csv.row(&[
            REVIEWERS[g.reviewer],
            ctx,
            item,
            scale,
            &value,
            g.reason,
            &secs,
            &at,
            g.note,
        ]);
    }
    csv.0
}

/// Gold pairs: two dozen pairs every reviewer graded on fit4, with the level the catalog
/// team agreed (the pair's true level in the simulation) and why.
fn gold_csv(grades: &[Grade], util: &[Vec<f64>], ctxs: &[Ctx], items: &[Item]) -> String {
    let mut graders: BTreeMap<(usize, usize), usize> = BTreeMap::new();
    for g in grades.iter().filter(|g| !g.useful2 && g.value.is_some()) {
        *graders.entry((g.ctx, g.item)).or_default() += 1;
    }
    let shared: Vec<(usize, usize)> = graders
        .into_iter()
        .filter(|(_, n)| *n == REVIEWERS.len())
        .map(|(pair, _)| pair)
        .collect();
    let step = (shared.len() / GOLD_PAIRS).max(1);
    let mut csv = Csv::new("context_id,item_id,scale,value,rationale");
    for &(c, i) in shared.iter().step_by(step).take(GOLD_PAIRS) {
        let v = level(util[c][i]);
        let why = match v {
            0 => format!("{} does not answer this context at all.", items[i].title),
            1 => format!(
                "{} is in the right area but misses what was asked.",
                items[i].title
            ),
            2 => format!("{} fits, with one clear shortcoming.", items[i].title),
            _ => format!("{} is exactly what was asked for.", items[i].title),
        };
        csv.row(&[&ctxs[c].id, &items[i].id, "fit4", &v.to_string(), &why]);
    }
    csv.0
}

/// How many gold pairs the demo has.
const GOLD_PAIRS: usize = 24;

// ---------------------------------------------------------------- entry point

/// Writes the whole demo catalog into `out_dir`, replacing earlier output.
pub fn write_demo_catalog(out_dir: &Path) -> io::Result<()> {
    let items = build_items(&mut Rng::phase(1));
    let ctxs = build_contexts(&items, &mut Rng::phase(2));
    let mut rng = Rng::phase(3);
    let util: Vec<Vec<f64>> = ctxs
        .iter()
        .map(|c| {
            items
                .iter()
                .map(|it| utility(c, it, &items, &mut rng))
                .collect()
        })
        .collect();
    let lists = rank_all(&ctxs, &items, &util, &mut Rng::phase(4));
    let mut pairs = Vec::new();
    for c in 0..ctxs.len() {
        let pool: BTreeSet<usize> = lists
            .iter()
            .flat_map(|r| r[c][..POOL_DEPTH].iter().copied())
            .collect();
        pairs.extend(pool.into_iter().map(|i| (c, i)));
    }
    let (grades, plan) = simulate_grades(&pairs, &ctxs, &util, &mut Rng::phase(5));

    let img_dir = out_dir.join("images");
    fs::create_dir_all(&img_dir)?;
    // Drop stale pictures from earlier runs so the folder matches items.csv exactly.
    for entry in fs::read_dir(&img_dir)? {
        let path = entry?.path();
        if path.is_file() && path.extension().is_some_and(|e| e == "png") {
            fs::remove_file(path)?;
        }
    }
    let mut img_rng = Rng::phase(6);
    for it in &items {
        fs::write(
            img_dir.join(format!("{}.png", it.id)),
            item_png(it, &mut img_rng)?,
        )?;
    }
    fs::write(out_dir.join("items.csv"), items_csv(&items))?;
    fs::write(out_dir.join("contexts.csv"), contexts_csv(&ctxs, &items))?;
    fs::write(
        out_dir.join("rankings.csv"),
        rankings_csv(&lists, &ctxs, &items),
    )?;
    fs::write(out_dir.join("scales.csv"), scales_csv())?;
    fs::write(
        out_dir.join("grades.csv"),
        grades_csv(&grades, &ctxs, &items),
    )?;
    fs::write(
        out_dir.join("machine-grades.csv"),
        machine::machine_grades_csv(&pairs, &ctxs, &items, &util, &mut Rng::phase(7)),
    )?;
    fs::write(
        out_dir.join("gold.csv"),
        gold_csv(&grades, &util, &ctxs, &items),
    )?;
    fs::write(
        out_dir.join("README.md"),
        readme::readme(&items, &ctxs, &grades, pairs.len(), &plan),
    )?;
    Ok(())
}
