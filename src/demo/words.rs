//! The invented shop's vocabulary and the catalog assembled from it: product
//! categories, product-line names and search queries, the items and contexts built
//! from them, and the texts reviewers see (scale rubrics, can't-judge reasons, notes).
//! Every name and phrase is made up; none refers to a real shop, maker or person.

use std::collections::BTreeSet;

use super::generate::Rng;

// ---------------------------------------------------------------- catalog model

/// What the capacity column means for a category.
#[derive(Clone, Copy)]
enum Cap {
    None,
    Persons(&'static [u32]),
    /// Volumes in tenths of a litre, to keep formatting exact.
    Litres(&'static [u32]),
    Temp(&'static [i32]),
}

/// One product category: word lists and attribute ranges the items are drawn from.
pub(super) struct Cat {
    pub(super) name: &'static str,
    /// (title noun, tag that queries can ask for)
    nouns: &'static [(&'static str, &'static str)],
    tags: &'static [&'static str],
    max_tags: usize,
    weight: (f64, f64),
    price: (f64, f64),
    cap: Cap,
    cap_verb: &'static str,
    uses: &'static [&'static str],
    pub(super) palette: &'static [[u8; 3]],
    /// Category whose items count as loosely related for anchors of this one.
    neighbour: Option<usize>,
}

#[rustfmt::skip]
pub(super) const CATS: [Cat; 12] = [
    Cat { name: "tents", nouns: &[("Ridge Tent", "ridge"), ("Dome Tent", "dome"), ("Tunnel Tent", "tunnel"), ("Pole Shelter", "shelter")],
        tags: &["freestanding", "4season", "two-door"], max_tags: 2, weight: (800.0, 4200.0), price: (119.0, 649.0),
        cap: Cap::Persons(&[1, 2, 2, 3, 4]), cap_verb: "Sleeps {}", uses: &["weekend trips", "long through-hikes", "windy campsites"],
        palette: &[[46, 125, 80], [214, 120, 40], [60, 96, 160], [180, 60, 50]], neighbour: None },
    Cat { name: "sleeping bags", nouns: &[("Mummy Bag", "mummy"), ("Quilt", "quilt"), ("Rectangular Bag", "rectangular")],
        tags: &["down", "synthetic"], max_tags: 1, weight: (500.0, 2200.0), price: (79.0, 489.0),
        cap: Cap::Temp(&[-15, -10, -5, 0, 5, 10]), cap_verb: "Comfort rated to {}", uses: &["cold nights", "shoulder-season trips", "hut-to-hut tours"],
        palette: &[[200, 70, 60], [70, 110, 170], [90, 140, 70], [120, 80, 150]], neighbour: Some(2) },
    Cat { name: "sleeping pads", nouns: &[("Air Pad", "air"), ("Foam Pad", "foam"), ("Self-Inflating Mat", "selfinflating")],
        tags: &["insulated", "wide", "compact"], max_tags: 2, weight: (250.0, 1400.0), price: (29.0, 219.0),
        cap: Cap::None, cap_verb: "", uses: &["rocky ground", "fast-and-light trips", "car camping"],
        palette: &[[230, 170, 40], [60, 140, 150], [190, 80, 110], [100, 100, 110]], neighbour: Some(1) },
    Cat { name: "packs", nouns: &[("Trail Pack", "trail"), ("Trekking Pack", "trekking"), ("Frameless Pack", "frameless"), ("Rucksack", "rucksack")],
        tags: &["hydration", "raincover", "womens-fit"], max_tags: 2, weight: (400.0, 2600.0), price: (49.0, 329.0),
        cap: Cap::Litres(&[180, 240, 300, 380, 450, 550, 650, 750]), cap_verb: "Holds {}", uses: &["day hikes", "multi-day treks", "hut tours"],
        palette: &[[50, 90, 140], [140, 60, 50], [70, 120, 60], [200, 140, 40]], neighbour: None },
    Cat { name: "stoves", nouns: &[("Canister Stove", "canister"), ("Alcohol Stove", "alcohol"), ("Wood Stove", "wood"), ("Integrated Stove", "integrated")],
        tags: &["windproof", "piezo", "multifuel"], max_tags: 2, weight: (60.0, 650.0), price: (24.0, 189.0),
        cap: Cap::None, cap_verb: "", uses: &["quick boil-ups", "group cooking", "cold mornings"],
        palette: &[[120, 120, 130], [70, 80, 100], [150, 110, 70], [90, 120, 100]], neighbour: Some(5) },
    Cat { name: "cookware", nouns: &[("Cook Pot", "pot"), ("Cook Set", "set"), ("Frying Pan", "pan"), ("Kettle", "kettle")],
        tags: &["titanium", "nonstick", "nesting"], max_tags: 2, weight: (90.0, 800.0), price: (19.0, 129.0),
        cap: Cap::Litres(&[6, 8, 10, 14, 18, 25]), cap_verb: "Holds {}", uses: &["solo trips", "cooking for two", "base camps"],
        palette: &[[150, 150, 160], [180, 90, 50], [60, 70, 80], [110, 140, 170]], neighbour: Some(4) },
    Cat { name: "headlamps", nouns: &[("Headlamp", "headlamp"), ("Trail Headlamp", "trail"), ("Head Torch", "torch")],
        tags: &["rechargeable", "redlight", "waterproof"], max_tags: 2, weight: (30.0, 180.0), price: (15.0, 119.0),
        cap: Cap::None, cap_verb: "", uses: &["early starts", "camp chores", "night hiking"],
        palette: &[[220, 80, 40], [40, 150, 120], [60, 60, 70], [70, 110, 200]], neighbour: None },
    Cat { name: "water treatment", nouns: &[("Squeeze Filter", "squeeze"), ("Gravity Filter", "gravity"), ("Purifier Bottle", "bottle"), ("UV Purifier", "uv")],
        tags: &["virus", "fast-flow"], max_tags: 1, weight: (40.0, 600.0), price: (19.0, 149.0),
        cap: Cap::Litres(&[5, 10, 10, 20, 40, 60]), cap_verb: "Treats {} per fill", uses: &["stream water", "group camps", "travel abroad"],
        palette: &[[50, 130, 200], [40, 160, 170], [80, 100, 190], [30, 110, 150]], neighbour: None },
    Cat { name: "trekking poles", nouns: &[("Trekking Poles", "trekking"), ("Z-Fold Poles", "zfold"), ("Trail Poles", "trail")],
        tags: &["carbon", "foldable", "cork-grip"], max_tags: 2, weight: (280.0, 640.0), price: (29.0, 179.0),
        cap: Cap::None, cap_verb: "", uses: &["steep descents", "long days", "river crossings"],
        palette: &[[60, 60, 70], [170, 50, 50], [50, 120, 170], [200, 150, 30]], neighbour: Some(10) },
    Cat { name: "rain shells", nouns: &[("Rain Jacket", "jacket"), ("Storm Shell", "storm"), ("Packable Shell", "packable")],
        tags: &["breathable", "pit-zips", "womens-fit", "waterproof"], max_tags: 2, weight: (150.0, 650.0), price: (59.0, 399.0),
        cap: Cap::None, cap_verb: "", uses: &["wet ridges", "everyday drizzle", "windy summits"],
        palette: &[[210, 60, 50], [40, 120, 110], [230, 180, 40], [60, 80, 150]], neighbour: None },
    Cat { name: "boots", nouns: &[("Hiking Boot", "hiking"), ("Mid Boot", "mid"), ("Trail Boot", "trail"), ("Backpacking Boot", "backpacking")],
        tags: &["waterproof", "wide-fit", "vegan", "ankle-support"], max_tags: 2, weight: (700.0, 1800.0), price: (89.0, 299.0),
        cap: Cap::None, cap_verb: "", uses: &["rough trails", "muddy paths", "loaded treks"],
        palette: &[[120, 80, 50], [90, 90, 80], [150, 100, 60], [70, 60, 60]], neighbour: Some(8) },
    Cat { name: "camp furniture", nouns: &[("Camp Chair", "chair"), ("Camp Table", "table"), ("Camp Stool", "stool"), ("Hammock", "hammock")],
        tags: &["foldable", "compact", "family"], max_tags: 2, weight: (300.0, 4000.0), price: (19.0, 189.0),
        cap: Cap::None, cap_verb: "", uses: &["base camps", "festival fields", "lakeside evenings"],
        palette: &[[60, 110, 70], [190, 110, 50], [70, 90, 140], [150, 60, 80]], neighbour: None },
];

/// Invented product-line names; none refers to a real maker.
#[rustfmt::skip]
const LINES: [&str; 16] = [
    "Larchway", "Brackenfold", "Tarnside", "Mossgate", "Heronmere", "Flintcairn", "Quillby", "Sorrelpeak",
    "Wrenfield", "Gorsebank", "Alderstep", "Cindermoor", "Fernlock", "Kestrelby", "Thimblecrag", "Oxeye",
];
#[rustfmt::skip]
const EXTRAS: [&str; 6] = [
    "a spare-parts kit included", "reflective trim for late returns", "a mesh storage sack",
    "replaceable wear parts", "a two-year repair promise", "a packed size that fits side pockets",
];

pub(super) struct Item {
    pub(super) id: String,
    pub(super) cat: usize,
    pub(super) noun: usize,
    pub(super) title: String,
    pub(super) description: String,
    pub(super) price_cents: u32,
    pub(super) new: bool,
    pub(super) weight_g: u32,
    pub(super) capacity: String,
    pub(super) tags: Vec<&'static str>,
}

/// Readable form of a tag for titles and descriptions.
fn tag_word(t: &str) -> &str {
    match t {
        "4season" => "four-season",
        "redlight" => "red-light",
        "pit-zips" => "pit-zip",
        "womens-fit" => "women's-fit",
        "raincover" => "cover-included",
        "hydration" => "hydration-ready",
        "ankle-support" => "high-ankle",
        "virus" => "virus-rated",
        "piezo" => "push-start",
        other => other,
    }
}

fn capitalise(s: &str) -> String {
    let mut c = s.chars();
    c.next()
        .map(|f| f.to_uppercase().collect::<String>() + c.as_str())
        .unwrap_or_default()
}

fn litres(tenths: u32) -> String {
    match tenths % 10 {
        0 => format!("{} L", tenths / 10),
        d => format!("{}.{d} L", tenths / 10),
    }
}

/// Draws a capacity and adds the tags it implies; queries match those like any
/// other tag. Returns (capacity column, short form for the title).
fn draw_capacity(cat: usize, rng: &mut Rng, tags: &mut Vec<&'static str>) -> (String, String) {
    match CATS[cat].cap {
        Cap::None => (String::new(), String::new()),
        Cap::Persons(v) => {
            let n = *rng.pick(v);
            tags.push(["1p", "2p", "3p", "4p"][n as usize - 1]);
            if n >= 3 {
                tags.push("family");
            }
            (format!("{n} person"), format!("{n}P"))
        }
        Cap::Litres(v) => {
            let t = *rng.pick(v);
            tags.push(match (cat, t) {
                (3, 0..=300) => "daypack",
                (3, 301..=500) => "overnight",
                (3, _) => "expedition",
                (5, 0..=10) => "solo",
                (_, 0..=10) => "personal",
                _ => "group",
            });
            let short = if cat == 3 {
                (t / 10).to_string()
            } else {
                litres(t)
            };
            (litres(t), short)
        }
        Cap::Temp(v) => {
            let t = *rng.pick(v);
            tags.push(match t {
                5.. => "summer",
                -4.. => "3season",
                _ => "winter",
            });
            // A comfort temperature rating, read as such wherever it shows.
            (format!("{t} °C comfort"), t.to_string())
        }
    }
}

/// Tags worth naming in titles and descriptions.
fn is_feature(cat: &Cat, t: &str) -> bool {
    cat.tags.contains(&t) || t == "ultralight"
}

/// One or two sentences built from the item's own attributes.
fn describe(
    cat: &Cat,
    noun: usize,
    tags: &[&str],
    weight_g: u32,
    capacity: &str,
    rng: &mut Rng,
) -> String {
    let adjs: Vec<&str> = tags
        .iter()
        .skip(1)
        .filter(|t| is_feature(cat, t))
        .map(|t| tag_word(t))
        .collect();
    let noun_l = cat.nouns[noun].0.to_lowercase();
    let phrase = match adjs.is_empty() {
        true => noun_l.clone(),
        false => format!("{} {noun_l}", adjs.join(", ")),
    };
    let article = match phrase.chars().next() {
        _ if noun_l.ends_with('s') => "A pair of",
        Some('a' | 'e' | 'i' | 'o' | 'u') => "An",
        _ => "A",
    };
    let mut text = format!("{article} {phrase} for {}.", rng.pick(cat.uses));
    if rng.chance(0.75) {
        if capacity.is_empty() {
            text += &format!(" Weighs {weight_g} g, with {}.", rng.pick(&EXTRAS));
        } else {
            let cap = cat.cap_verb.replace(
                "{}",
                capacity
                    .trim_end_matches(" person")
                    .trim_end_matches(" comfort"),
            );
            text += &format!(" {cap} and weighs {weight_g} g.");
        }
    }
    text
}

fn make_item(n: usize, ci: usize, new: bool, rng: &mut Rng, titles: &mut BTreeSet<String>) -> Item {
    let cat = &CATS[ci];
    let noun = rng.below(cat.nouns.len());
    let mut tags = vec![cat.nouns[noun].1];
    let mut pool = cat.tags.to_vec();
    rng.shuffle(&mut pool);
    tags.extend(pool.iter().take(1 + rng.below(cat.max_tags)));
    // Light gear tends to cost more; attribute tags follow from the numbers.
    let wf = rng.unit();
    let pf = (0.6 * rng.unit() + 0.4 * (1.0 - wf)).clamp(0.0, 1.0);
    if wf < 0.3 {
        tags.push("ultralight");
    }
    match pf {
        ..0.3 => tags.push("budget"),
        0.8.. => tags.push("premium"),
        _ => {}
    }
    let weight_g = (cat.weight.0 + wf * (cat.weight.1 - cat.weight.0)) as u32 / 5 * 5;
    let euros = (cat.price.0 + pf * (cat.price.1 - cat.price.0)) as u32;
    let price_cents =
        euros * 100 + [0, 50, 99, 95][rng.below(4)] - if rng.chance(0.5) { 100 } else { 0 };
    let (capacity, cap_short) = draw_capacity(ci, rng, &mut tags);
    let qualifier = match tags.iter().skip(1).find(|t| is_feature(cat, t)) {
        _ if !cap_short.is_empty() => cap_short,
        Some(t) => capitalise(tag_word(t)),
        None => String::new(),
    };
    let title = loop {
        let parts = [*rng.pick(&LINES), &qualifier, cat.nouns[noun].0];
        let title = parts
            .into_iter()
            .filter(|p| !p.is_empty())
            .collect::<Vec<_>>()
            .join(" ");
        if titles.insert(title.clone()) {
            break title;
        }
    };
    let description = describe(cat, noun, &tags, weight_g, &capacity, rng);
    let id = format!("fh-{n:04}");
    Item {
        id,
        cat: ci,
        noun,
        title,
        description,
        price_cents,
        new,
        weight_g,
        capacity,
        tags,
    }
}

/// Twenty items per category; 30 new ones, three in six categories and two in the rest.
pub(super) fn build_items(rng: &mut Rng) -> Vec<Item> {
    let mut order: Vec<usize> = (0..CATS.len()).collect();
    rng.shuffle(&mut order);
    let mut titles = BTreeSet::new();
    let mut items = Vec::new();
    for ci in 0..CATS.len() {
        let new_count = if order[..6].contains(&ci) { 3 } else { 2 };
        let mut new_slots: Vec<bool> = (0..20).map(|i| i < new_count).collect();
        rng.shuffle(&mut new_slots);
        for new in new_slots {
            items.push(make_item(items.len() + 1, ci, new, rng, &mut titles));
        }
    }
    items
}

// ---------------------------------------------------------------- contexts

pub(super) struct Ctx {
    pub(super) id: String,
    pub(super) text: String,
    pub(super) anchor: Option<usize>,
    pub(super) segment: &'static str,
    pub(super) cat: usize,
    pub(super) second: Option<usize>,
    pub(super) wants: &'static [&'static str],
}

/// (segment, text, category, loosely related category, wanted tags)
type QuerySpec = (
    &'static str,
    &'static str,
    usize,
    Option<usize>,
    &'static [&'static str],
);

#[rustfmt::skip]
const QUERIES: [QuerySpec; 40] = [
    ("head", "tent", 0, None, &[]),
    ("head", "sleeping bag", 1, Some(2), &[]),
    ("head", "backpack", 3, None, &[]),
    ("head", "headlamp", 6, None, &[]),
    ("head", "camping stove", 4, Some(5), &[]),
    ("head", "hiking boots", 10, Some(8), &[]),
    ("head", "rain jacket", 9, None, &[]),
    ("head", "trekking poles", 8, None, &[]),
    ("head", "water filter", 7, None, &[]),
    ("head", "camping chair", 11, None, &["chair"]),
    ("torso", "ultralight 2 person tent", 0, None, &["ultralight", "2p"]),
    ("torso", "down sleeping bag", 1, None, &["down"]),
    ("torso", "winter sleeping bag", 1, None, &["winter"]),
    ("torso", "insulated sleeping pad", 2, Some(1), &["insulated"]),
    ("torso", "45 liter backpack", 3, None, &["overnight"]),
    ("torso", "daypack with hydration sleeve", 3, None, &["daypack", "hydration"]),
    ("torso", "titanium cook pot", 5, Some(4), &["titanium", "pot"]),
    ("torso", "rechargeable headlamp", 6, None, &["rechargeable"]),
    ("torso", "waterproof hiking boots", 10, None, &["waterproof"]),
    ("torso", "gravity filter for groups", 7, None, &["gravity", "group"]),
    ("torso", "carbon trekking poles", 8, None, &["carbon"]),
    ("torso", "lightweight rain jacket", 9, None, &["ultralight"]),
    ("torso", "4 person family tent", 0, None, &["4p", "family"]),
    ("torso", "folding camp table", 11, None, &["table", "foldable"]),
    ("torso", "cheap camping stove", 4, Some(5), &["budget"]),
    ("tail", "ultralight quilt for summer", 1, None, &["quilt", "summer", "ultralight"]),
    ("tail", "waterproof headlamp with red light", 6, None, &["redlight", "waterproof"]),
    ("tail", "wide insulated pad for side sleepers", 2, None, &["wide", "insulated"]),
    ("tail", "womens 38 l pack with rain cover", 3, None, &["womens-fit", "overnight", "raincover"]),
    ("tail", "windproof stove with push start", 4, None, &["windproof", "piezo"]),
    ("tail", "nesting cook set for two", 5, Some(4), &["set", "nesting"]),
    ("tail", "vegan wide fit hiking boots", 10, None, &["vegan", "wide-fit"]),
    ("tail", "breathable shell with pit zips", 9, None, &["breathable", "pit-zips"]),
    ("tail", "folding carbon poles for fast hikes", 8, None, &["carbon", "foldable"]),
    ("tail", "squeeze filter ultralight", 7, None, &["squeeze", "ultralight"]),
    ("tail", "4 season freestanding tent", 0, None, &["4season", "freestanding"]),
    ("tail", "multifuel stove for expeditions", 4, Some(5), &["multifuel"]),
    ("tail", "lightweight hammock", 11, None, &["hammock", "ultralight"]),
    ("tail", "nonstick frying pan", 5, None, &["pan", "nonstick"]),
    ("tail", "something warm for the alps", 1, Some(9), &["winter"]),
];

/// The 40 queries plus ten anchors from ten different categories (established items only).
pub(super) fn build_contexts(items: &[Item], rng: &mut Rng) -> Vec<Ctx> {
    let mut ctxs: Vec<Ctx> = QUERIES
        .iter()
        .enumerate()
        .map(|(i, &(segment, text, cat, second, wants))| Ctx {
            id: format!("q{:02}", i + 1),
            text: text.to_string(),
            anchor: None,
            segment,
            cat,
            second,
            wants,
        })
        .collect();
    let mut cats: Vec<usize> = (0..CATS.len()).collect();
    rng.shuffle(&mut cats);
    for (k, &cat) in cats[..10].iter().enumerate() {
        let pool: Vec<usize> = (0..items.len())
            .filter(|&i| items[i].cat == cat && !items[i].new)
            .collect();
        let a = *rng.pick(&pool);
        let text = match k % 2 {
            0 => format!("Alternatives to {}", items[a].title),
            _ => String::new(),
        };
        let (id, second) = (format!("a{:02}", k + 1), CATS[cat].neighbour);
        ctxs.push(Ctx {
            id,
            text,
            anchor: Some(a),
            segment: "anchor",
            cat,
            second,
            wants: &[],
        });
    }
    ctxs
}

// ---------------------------------------------------------------- grading texts

#[rustfmt::skip]
pub(super) const NOTES: [&str; 4] = [
    "heavier than the query suggests", "fits, but pricey for what is asked",
    "near duplicate of another result", "capacity not stated clearly",
];
#[rustfmt::skip]
pub(super) const OTHER_REASONS: [&str; 3] =
    ["image missing", "other: title and description disagree", "other: looks like a bundle, not one item"];

#[rustfmt::skip]
pub(super) const SCALES: [(&str, &str, &str); 6] = [
    ("fit4", "Off target", "The item does not serve what the shopper is after here, even as a fallback."),
    ("fit4", "Loosely related", "Same general area, but it misses the main need, so few shoppers would pick it."),
    ("fit4", "Good alternative", "It serves the main need, with a gap in one detail such as size, weight or price."),
    ("fit4", "Spot on", "It matches every need the context states or clearly implies."),
    ("useful2", "Not useful", "Showing the item here would not help the shopper move forward."),
    ("useful2", "Useful", "A shopper in this context could reasonably choose or compare this item."),
];
