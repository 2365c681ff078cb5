//! The admission notes of the demo cohort, and its study file.
//!
//! Every phrase here was written for this generator; every person and place
//! name is invented and drawn only from [`INVENTED_PEOPLE`] and
//! [`INVENTED_PLACES`]. A note never names a relative or a patient.
//!
//! Each note-only factor has affirmed phrasings that the study file's concept
//! lists catch (`listed`), one rarer phrasing they miss (as a real term list
//! would), negated mentions that start with a common negation cue (denies,
//! no, not) in the manner of NegEx (Chapman et al. 2001), and distractors:
//! sentences that contain a concept term without being about the patient, or
//! that look relevant without containing a term. Affirmed sentences never
//! carry a negation cue before their term, so a sentence-bounded negation
//! scope reads them as affirmed.

use super::{Patient, ROUTES, WARDS};
use crate::rng::Rng;
use serde::{Deserialize, Serialize};

/// The six note-only factors of one patient: written in the note, never a
/// column.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
pub struct Factors {
    /// Lives alone.
    pub lives_alone: bool,
    /// Uses a walking aid or is frail.
    pub walking_aid: bool,
    /// Had a recent fall.
    pub recent_fall: bool,
    /// Cognitive impairment (dementia, memory problems).
    pub cognitive_impairment: bool,
    /// Poor medication adherence.
    pub poor_adherence: bool,
    /// Unstable housing (homeless, hostel, temporary accommodation).
    pub unstable_housing: bool,
}

impl Factors {
    /// Factor names, which are also the study file's concept names, in the
    /// order of [`Factors::as_array`].
    pub const NAMES: [&'static str; 6] = [
        "lives_alone",
        "walking_aid",
        "recent_fall",
        "cognitive_impairment",
        "poor_adherence",
        "unstable_housing",
    ];

    /// The factors in [`Factors::NAMES`] order.
    pub fn as_array(&self) -> [bool; 6] {
        [
            self.lives_alone,
            self.walking_aid,
            self.recent_fall,
            self.cognitive_impairment,
            self.poor_adherence,
            self.unstable_housing,
        ]
    }
}

/// Surnames of the invented clinicians who appear in notes ("Dr. ...").
pub const INVENTED_PEOPLE: [&str; 10] = [
    "Quillfeather",
    "Bramblewick",
    "Thistlecombe",
    "Larkspindle",
    "Copperkettle",
    "Wimbleshaw",
    "Tumblethorn",
    "Fennimoss",
    "Glimmerdew",
    "Puddlefoot",
];

/// Invented places that appear in notes.
pub const INVENTED_PLACES: [&str; 5] = [
    "Marrowvale General",
    "Thimbleford Community Hospital",
    "Puddlewick Surgery",
    "Brackenfold House",
    "Glimmerbrook Lodge",
];

/// One way of writing something in a note. Placeholders in braces are filled
/// per patient: {poss} {obj} {refl} {spouse} {rel} {n} {dwelling} {drug}
/// {year} {hostel} {carehome}.
pub(crate) struct Phrase {
    pub(crate) text: &'static str,
    /// Whether the study file's concept list catches it.
    pub(crate) listed: bool,
}

const fn p(text: &'static str) -> Phrase {
    Phrase { text, listed: true }
}
const fn missed(text: &'static str) -> Phrase {
    Phrase {
        text,
        listed: false,
    }
}

/// Everything the note writer knows about one factor.
pub(crate) struct FactorText {
    /// Concept terms in the study file.
    pub(crate) terms: &'static [&'static str],
    /// Affirmed phrasings; one is the rarer phrasing the list misses.
    pub(crate) affirmed: &'static [Phrase],
    /// Negated mentions (start with a negation cue, then a term).
    pub(crate) negated: &'static [&'static str],
    /// Neutral sentences for patients without the factor (no term).
    pub(crate) neutral: &'static [&'static str],
    /// Sentences that contain a term but are not about the patient's own
    /// state, or look relevant but hold no term.
    pub(crate) distractors: &'static [&'static str],
    /// A plan item for patients with the factor; it holds no concept term,
    /// so each affirmed mention is counted once.
    pub(crate) plan: &'static str,
    /// Chance that a patient without the factor gets a negated mention.
    pub(crate) negated_share: f64,
}

/// Per factor, in [`Factors::NAMES`] order.
pub(crate) const FACTOR_TEXT: [FactorText; 6] = [
    FactorText {
        terms: &[
            "lives alone",
            "living alone",
            "lives by herself",
            "lives by himself",
            "lives on her own",
            "lives on his own",
            "sole occupant",
        ],
        affirmed: &[
            p("Lives alone in a {dwelling}."),
            p("Lives by {refl} in a {dwelling}."),
            p("Lives on {poss} own since {spouse} died {n} yrs ago."),
            p("Sole occupant of a {dwelling}, {rel} visits weekly."),
            p("Pt living alone at present, {rel} nearby."),
            p("Widowed, lives alone."),
            missed("Home alone most days since being widowed."),
        ],
        negated: &[
            "Not living alone, {rel} lives w/ {obj}.",
            "Denies living alone; shares home w/ {spouse}.",
            "No longer lives alone, moved in w/ {rel}.",
        ],
        neutral: &[
            "Lives w/ {spouse} in a {dwelling}.",
            "Lives w/ {rel} and family.",
            "Lives w/ partner, independent w/ ADLs.",
        ],
        distractors: &["Neighbour lives alone and pops in daily."],
        plan: "OT home visit re support at home.",
        negated_share: 0.35,
    },
    FactorText {
        terms: &[
            "walking aid",
            "walking frame",
            "walking stick",
            "frail",
            "frailty",
            "rollator",
            "walker",
            "wheelchair",
        ],
        affirmed: &[
            p("Mobilises w/ a walking frame."),
            p("Uses a walking stick outdoors."),
            p("Frail, needs assist x1 for transfers."),
            p("Uses a rollator at home."),
            p("Walks short distances w/ a walker."),
            p("Wheelchair for longer distances."),
            missed("Housebound, mobility v limited."),
        ],
        negated: &[
            "Mobilises independently without walking aid.",
            "No walking aid at baseline.",
            "Not frail, walks {n} miles most days.",
        ],
        neutral: &[
            "Mobilises independently.",
            "Independent w/ ADLs, still drives.",
        ],
        distractors: &[
            "Ward frailty screen done as routine.",
            "Physio to assess gait before d/c.",
        ],
        plan: "PT review re mobility.",
        negated_share: 0.40,
    },
    FactorText {
        terms: &[
            "recent fall",
            "fell",
            "had a fall",
            "found on the floor",
            "found on floor",
            "mechanical fall",
            "falls",
        ],
        affirmed: &[
            p("Fell at home {n} days ago."),
            p("Had a fall last week, no head injury."),
            p("Found on the floor by {rel} this morning."),
            p("Recent fall in the bathroom."),
            p("Mechanical fall {n} days PTA."),
            p("Two falls in the past month."),
            missed("Tripped on a rug yesterday, landed on L hip."),
        ],
        negated: &[
            "Denies falls.",
            "No falls in last 6 months.",
            "No recent fall.",
        ],
        neutral: &[],
        distractors: &[
            "{Rel} fell last year and now lives at {carehome}.",
            "Fall prevention leaflet given.",
            "Falls risk assessment completed as routine.",
        ],
        plan: "Lying/standing BP, check footwear.",
        negated_share: 0.40,
    },
    FactorText {
        terms: &[
            "dementia",
            "cognitive impairment",
            "memory problems",
            "memory loss",
            "confused at baseline",
            "mci",
        ],
        affirmed: &[
            p("Known dementia, {rel} helps w/ meds."),
            p("Mild cognitive impairment dx {year}."),
            p("Memory problems noted by family."),
            p("Confused at baseline per {rel}."),
            p("AMT 5/10, long-standing memory loss."),
            p("MCI, under memory clinic f/u."),
            missed("Forgetful, repeats questions."),
        ],
        negated: &[
            "No h/o dementia.",
            "No cognitive impairment noted.",
            "Denies memory problems.",
        ],
        neutral: &["Alert and orientated x3."],
        distractors: &[
            "Mother had dementia.",
            "Acute confusion on arrival, ?delirium, now settled.",
        ],
        plan: "Collateral hx from {rel}.",
        negated_share: 0.35,
    },
    FactorText {
        terms: &[
            "poor adherence",
            "missed doses",
            "stopped taking",
            "noncompliant",
            "nonadherent",
            "forgets to take",
        ],
        affirmed: &[
            p("Poor adherence to meds."),
            p("Admits missed doses of {drug} most weeks."),
            p("Stopped taking {drug} {n} wks ago."),
            p("Noncompliant w/ inhalers."),
            p("Often forgets to take evening meds."),
            p("Nonadherent w/ diuretics per pharmacy."),
            missed("Blister packs found unopened at home."),
        ],
        negated: &[
            "Denies missed doses.",
            "No missed doses per pharmacy.",
            "No concerns re poor adherence.",
        ],
        neutral: &["Takes meds as prescribed.", "Manages own meds."],
        distractors: &[
            "{Rel} stopped taking the bus to visit.",
            "Pharmacist reviewed drug chart.",
        ],
        plan: "Pharmacy to set up blister packs.",
        negated_share: 0.35,
    },
    FactorText {
        terms: &[
            "homeless",
            "sleeping rough",
            "hostel",
            "sofa surfing",
            "temporary accommodation",
            "evicted",
        ],
        affirmed: &[
            p("Currently homeless."),
            p("Sleeping rough for past {n} wks."),
            p("Staying at {hostel} hostel."),
            p("Sofa surfing w/ friends."),
            p("In temporary accommodation since {n} wks."),
            missed("Between addresses at present, no fixed place to stay."),
        ],
        negated: &["Not homeless, own tenancy.", "Denies sleeping rough."],
        neutral: &["Stable tenancy.", "Owns home."],
        distractors: &[
            "Volunteers at a homeless shelter on weekends.",
            "Housing officer letter re repairs on file.",
        ],
        plan: "Housing team referral.",
        negated_share: 0.25,
    },
];

/// Chance that an affirmed mention uses the phrasing the concept list misses.
pub(crate) const MISSED_SHARE: f64 = 0.02;
/// Chance that a present factor gets its plan item.
const PLAN_MENTION_SHARE: f64 = 0.30;
/// Chance of each factor's distractor sentence appearing in a note.
const DISTRACTOR_SHARE: f64 = 0.012;
/// Chance that a note has one typo.
const TYPO_SHARE: f64 = 0.20;

/// Words that notes may misspell, with the misspelling. None is part of a
/// concept term, so a typo never hides a mention.
pub(crate) const TYPOS: [(&str, &str); 10] = [
    ("independently", "independantly"),
    ("assessment", "assesment"),
    ("review", "reveiw"),
    ("tomorrow", "tommorow"),
    ("weakness", "weakenss"),
    ("prescribed", "perscribed"),
    ("daughter", "daugther"),
    ("bathroom", "bathrom"),
    ("routine", "rotuine"),
    ("swelling", "sweling"),
];

const COMORBIDITIES: [&str; 14] = [
    "CHF",
    "COPD",
    "T2DM",
    "HTN",
    "AF",
    "CKD 3",
    "IHD",
    "OA",
    "hypothyroidism",
    "s/p CVA",
    "GORD",
    "osteoporosis",
    "asthma",
    "PVD",
];

/// Presenting complaints with a matching first plan item.
const COMPLAINTS: [(&str, &str); 10] = [
    ("SOB", "Nebs, CXR, consider steroids."),
    ("productive cough", "Oral abx, sputum culture."),
    ("UTI sx", "IV abx, urine culture."),
    ("chest pain", "Serial troponin, ECG monitoring."),
    ("abdo pain", "Bloods, USS abdo, keep NBM for now."),
    (
        "generalised weakness",
        "Bloods, septic screen, PT/OT input.",
    ),
    ("dizziness", "Lying/standing BP, ECG, review meds."),
    (
        "bilateral leg swelling",
        "IV diuresis, daily weights, fluid balance.",
    ),
    (
        "fever and rigors",
        "Blood cultures, IV abx per sepsis pathway.",
    ),
    ("vomiting", "IV fluids, antiemetics, U&E tomorrow."),
];

const EXAM: [&str; 8] = [
    "Chest: bibasal crackles.",
    "Chest clear, HS I+II+0.",
    "Abdo soft, mild suprapubic tenderness.",
    "Pitting oedema to mid shins bilaterally.",
    "Dry mucous membranes.",
    "Abdo soft, NT, BS present.",
    "Scattered wheeze throughout.",
    "Calves SNT, no rash.",
];

const FILLER: [&str; 8] = [
    "Encourage oral fluids.",
    "Repeat bloods in AM.",
    "VTE prophylaxis per chart.",
    "Monitor obs 4-hourly.",
    "Review tomorrow on ward round.",
    "Escalate if NEWS rises.",
    "Continue regular meds for now.",
    "Dietitian input if intake remains poor.",
];

const SOCIAL_HABITS: [&str; 5] = [
    "Ex-smoker, {n} units EtOH/wk.",
    "Non-smoker, no EtOH.",
    "Smoker {n}/day, occasional EtOH.",
    "Never smoked, social drinker.",
    "Quit smoking {n} yrs ago.",
];

const DWELLINGS: [&str; 4] = ["flat", "house", "bungalow", "ground floor flat"];
const DRUGS: [&str; 6] = [
    "furosemide",
    "metformin",
    "apixaban",
    "ramipril",
    "inhalers",
    "bisoprolol",
];
const RELATIVES: [&str; 6] = ["daughter", "son", "niece", "nephew", "sister", "brother"];

/// Pronouns and spouse word for one patient.
struct Voice {
    poss: &'static str,
    obj: &'static str,
    refl: &'static str,
    spouse: &'static str,
    rel: &'static str,
}

fn pick<'a>(rng: &mut Rng, items: &[&'a str]) -> &'a str {
    items[rng.below(items.len())]
}

/// Pick one of `items` and fill its placeholders.
fn fill_pick(rng: &mut Rng, items: &[&str], v: &Voice) -> String {
    let t = pick(rng, items);
    fill(rng, t, v)
}

/// Fill the placeholders of a phrase.
fn fill(rng: &mut Rng, text: &str, v: &Voice) -> String {
    let mut out = text.to_string();
    if out.contains("{Rel}") {
        let mut r = v.rel.to_string();
        if let Some(first) = r.get_mut(0..1) {
            first.make_ascii_uppercase();
        }
        out = out.replace("{Rel}", &r);
    }
    let simple = [
        ("{poss}", v.poss),
        ("{obj}", v.obj),
        ("{refl}", v.refl),
        ("{spouse}", v.spouse),
        ("{rel}", v.rel),
        ("{hostel}", INVENTED_PLACES[3]),
        ("{carehome}", INVENTED_PLACES[4]),
    ];
    for (key, value) in simple {
        out = out.replace(key, value);
    }
    if out.contains("{n}") {
        out = out.replace("{n}", &(2 + rng.below(9)).to_string());
    }
    if out.contains("{dwelling}") {
        out = out.replace("{dwelling}", pick(rng, &DWELLINGS));
    }
    if out.contains("{drug}") {
        out = out.replace("{drug}", pick(rng, &DRUGS));
    }
    if out.contains("{year}") {
        out = out.replace("{year}", &(2015 + rng.below(9)).to_string());
    }
    out
}

/// An affirmed phrasing: the unlisted one with [`MISSED_SHARE`], else one of
/// the listed ones uniformly.
fn affirmed<'a>(rng: &mut Rng, text: &'a FactorText) -> &'a Phrase {
    let unlisted = text.affirmed.iter().find(|p| !p.listed);
    if let Some(missed) = unlisted.filter(|_| rng.bernoulli(MISSED_SHARE)) {
        return missed;
    }
    let listed: Vec<&Phrase> = text.affirmed.iter().filter(|p| p.listed).collect();
    listed[rng.below(listed.len())]
}

/// A sentence a section may lose when the note runs long.
struct Sentence {
    text: String,
    optional: bool,
}

fn keep(text: String) -> Sentence {
    Sentence {
        text,
        optional: false,
    }
}
fn optional(text: String) -> Sentence {
    Sentence {
        text,
        optional: true,
    }
}

/// Shortest and longest note, in whitespace-separated words.
pub(crate) const NOTE_WORDS: (usize, usize) = (60, 250);

fn word_count(sections: &[(&str, Vec<Sentence>)]) -> usize {
    sections
        .iter()
        .map(|(h, s)| {
            h.split_whitespace().count()
                + s.iter()
                    .map(|x| x.text.split_whitespace().count())
                    .sum::<usize>()
        })
        .sum()
}

/// Write one admission note.
pub(crate) fn write_note(rng: &mut Rng, pt: &Patient) -> String {
    let v = Voice {
        poss: if pt.female { "her" } else { "his" },
        obj: if pt.female { "her" } else { "him" },
        refl: if pt.female { "herself" } else { "himself" },
        spouse: if pt.female { "husband" } else { "wife" },
        rel: pick(rng, &RELATIVES),
    };
    let present = pt.factors.as_array();
    let ft = &FACTOR_TEXT;
    // The text of one factor's mention for this patient, if any.
    // A patient without a stable home is not written up as living in a
    // dwelling or with family: only the home-free phrasings apply.
    let homeless = pt.factors.unstable_housing;
    let mention = |rng: &mut Rng, k: usize| -> Option<String> {
        if present[k] {
            let ph = affirmed(rng, &ft[k]);
            if k == 0 && homeless && (ph.text.contains("{dwelling}") || ph.text.contains("since")) {
                return Some(fill(rng, ft[0].affirmed[5].text, &v));
            }
            Some(fill(rng, ph.text, &v))
        } else if k == 0 && homeless {
            None
        } else if rng.bernoulli(ft[k].negated_share) {
            let t = pick(rng, ft[k].negated);
            Some(fill(rng, t, &v))
        } else if !ft[k].neutral.is_empty() && rng.bernoulli(0.5) {
            let t = pick(rng, ft[k].neutral);
            Some(fill(rng, t, &v))
        } else {
            None
        }
    };

    // History.
    let mut comorb: Vec<usize> = (0..COMORBIDITIES.len()).collect();
    rng.shuffle(&mut comorb);
    comorb.truncate(pt.comorbidities as usize);
    let complaint = rng.below(COMPLAINTS.len());
    let hx_heading = pick(rng, &["HPI:", "Hx:", "History:", "PC/HPC:"]);
    let mut hx = Vec::new();
    let sex = if pt.female { "F" } else { "M" };
    let background = match comorb.len() {
        0 => "no significant PMH".to_string(),
        1 => format!("h/o {}", COMORBIDITIES[comorb[0]]),
        _ => format!(
            "h/o {}, {}",
            COMORBIDITIES[comorb[0]], COMORBIDITIES[comorb[1]]
        ),
    };
    hx.push(keep(format!(
        "{}yo {} w/ {} p/w {} x {}/7.",
        pt.age,
        sex,
        background,
        COMPLAINTS[complaint].0,
        1 + rng.below(6)
    )));
    let route = ROUTES[pt.route].0;
    let arrival = match route {
        "referral" => format!(
            "Referred by Dr. {} at {}.",
            pick(rng, &INVENTED_PEOPLE),
            INVENTED_PLACES[2]
        ),
        "transfer" => format!("Transfer from {}.", INVENTED_PLACES[1]),
        _ => pick(
            rng,
            &["BIBA to ED.", "Self-presented to ED.", "Via ED overnight."],
        )
        .to_string(),
    };
    hx.push(keep(arrival));
    if pt.prior_admissions > 0 {
        hx.push(optional(format!(
            "{} admission(s) in past yr.",
            pt.prior_admissions
        )));
    }

    // Past history and medicines.
    let pmh_heading = pick(rng, &["PMH:", "Background:"]);
    let mut pmh = Vec::new();
    if comorb.is_empty() {
        pmh.push(keep("Nil of note.".to_string()));
    } else {
        let list: Vec<&str> = comorb.iter().map(|&i| COMORBIDITIES[i]).collect();
        pmh.push(keep(format!("{}.", list.join(", "))));
    }
    let mut meds = Vec::new();
    meds.push(optional(format!(
        "{} regular meds incl {}.",
        2 + pt.comorbidities + rng.below(3) as u32,
        pick(rng, &DRUGS)
    )));
    if let Some(s) = mention(rng, 4) {
        meds.push(keep(s));
    }
    if rng.bernoulli(DISTRACTOR_SHARE) {
        meds.push(optional(fill_pick(rng, ft[4].distractors, &v)));
    }

    // Social.
    let social_heading = pick(rng, &["Social:", "SH:", "Social hx:"]);
    let mut social = Vec::new();
    if let Some(s) = mention(rng, 0) {
        social.push(keep(s));
    }
    if rng.bernoulli(DISTRACTOR_SHARE) {
        social.push(optional(fill_pick(rng, ft[0].distractors, &v)));
    }
    if let Some(s) = mention(rng, 5) {
        social.push(keep(s));
    }
    if rng.bernoulli(DISTRACTOR_SHARE) {
        social.push(optional(fill_pick(rng, ft[5].distractors, &v)));
    }
    social.push(optional(fill_pick(rng, &SOCIAL_HABITS, &v)));

    // Function and cognition.
    let func_heading = pick(rng, &["Functional:", "Mobility:", "Function:"]);
    let mut func = Vec::new();
    for k in [1, 2] {
        if let Some(s) = mention(rng, k) {
            func.push(keep(s));
        }
        if rng.bernoulli(DISTRACTOR_SHARE) {
            func.push(optional(fill_pick(rng, ft[k].distractors, &v)));
        }
    }
    if func.is_empty() {
        func.push(keep("Not formally assessed yet.".to_string()));
    }
    let mut cog = Vec::new();
    if let Some(s) = mention(rng, 3) {
        cog.push(keep(s));
    }
    if rng.bernoulli(DISTRACTOR_SHARE) {
        cog.push(optional(fill_pick(rng, ft[3].distractors, &v)));
    }

    // Examination and bloods.
    let mut exam = Vec::new();
    exam.push(keep(format!(
        "Obs: HR {}, BP {}/{}, SpO2 {}% RA, T {}.{}.",
        pt.heart_rate,
        100 + rng.below(60),
        55 + rng.below(35),
        90 + rng.below(10),
        36 + rng.below(2),
        rng.below(10)
    )));
    exam.push(optional(pick(rng, &EXAM).to_string()));
    let na = pt
        .sodium
        .map_or_else(|| "awaited".to_string(), |x| x.to_string());
    let cr = pt
        .creatinine
        .map_or_else(|| "awaited".to_string(), |x| format!("{x:.2}"));
    exam.push(keep(format!("Bloods: Na {na}, Cr {cr}.")));

    // Plan.
    let plan_heading = pick(rng, &["Plan:", "Imp/Plan:", "Mx:"]);
    let mut plan = Vec::new();
    plan.push(keep(COMPLAINTS[complaint].1.to_string()));
    for k in 0..6 {
        if present[k] && rng.bernoulli(PLAN_MENTION_SHARE) {
            plan.push(keep(fill(rng, ft[k].plan, &v)));
        }
    }
    plan.push(optional(
        pick(
            rng,
            &[
                "EDD {n} days.",
                "Aim d/c when medically fit.",
                "TTO when ready.",
            ],
        )
        .replace("{n}", &(2 + rng.below(6)).to_string()),
    ));
    plan.push(keep(format!(
        "Seen w/ Dr. {} ({} ward, {}).",
        pick(rng, &INVENTED_PEOPLE),
        WARDS[pt.ward].0,
        INVENTED_PLACES[0]
    )));

    let mut sections: Vec<(&str, Vec<Sentence>)> = vec![
        (hx_heading, hx),
        (pmh_heading, pmh),
        ("Meds:", meds),
        (social_heading, social),
        (func_heading, func),
    ];
    if !cog.is_empty() {
        sections.push(("Cognition:", cog));
    }
    sections.push(("O/E:", exam));
    sections.push((plan_heading, plan));

    // Keep within the word bounds: pad the plan, or drop optional sentences
    // from the end backwards.
    let mut filler: Vec<&str> = FILLER.to_vec();
    rng.shuffle(&mut filler);
    let extra = rng.below(3);
    let mut fi = 0;
    while fi < filler.len() && (word_count(&sections) < NOTE_WORDS.0 || fi < extra) {
        if let Some((_, plan)) = sections.last_mut() {
            let at = plan.len().saturating_sub(1);
            plan.insert(at, optional(filler[fi].to_string()));
        }
        fi += 1;
    }
    'trim: while word_count(&sections) > NOTE_WORDS.1 {
        for (_, sentences) in sections.iter_mut().rev() {
            if let Some(pos) = sentences.iter().rposition(|s| s.optional) {
                sentences.remove(pos);
                continue 'trim;
            }
        }
        break;
    }

    let mut note = String::new();
    for (i, (heading, sentences)) in sections.iter().enumerate() {
        if i > 0 {
            note.push('\n');
        }
        note.push_str(heading);
        for s in sentences {
            note.push(' ');
            note.push_str(&s.text);
        }
    }
    if rng.bernoulli(TYPO_SHARE) {
        let (right, wrong) = TYPOS[rng.below(TYPOS.len())];
        note = note.replacen(right, wrong, 1);
    }
    note
}

/// Structured covariates of the demo cohort, in column order.
pub(crate) const STRUCTURED: [&str; 9] = [
    "age",
    "sex",
    "ward",
    "admission_route",
    "prior_admissions",
    "comorbidity_count",
    "sodium",
    "creatinine",
    "heart_rate",
];

fn toml_list(items: &[String]) -> String {
    let quoted: Vec<String> = items.iter().map(|s| format!("\"{s}\"")).collect();
    format!("[{}]", quoted.join(", "))
}

/// The demo's study file: roles, one concept per note-only factor, and three
/// designs (structured covariates only; the same plus the note concepts; the
/// note-aware terms with a Mahalanobis distance and greedy matching).
pub(crate) fn study_toml() -> String {
    let structured: Vec<String> = STRUCTURED.iter().map(|s| s.to_string()).collect();
    let mut aware = structured.clone();
    aware.extend(Factors::NAMES.iter().map(|n| format!("concept.{n}")));
    let mut s = String::new();
    s.push_str(
        "# pairsight study file for the invented demo cohort (every record is invented).\n\
         # Written by `pairsight demo`; see docs/demo.md.\n\n",
    );
    s.push_str("[columns]\n");
    s.push_str("id = \"patient_id\"\n");
    s.push_str("group = \"early_plan\"\n");
    s.push_str("treated = \"1\"\n");
    s.push_str("outcomes = [\"readmit_30d\", \"length_of_stay\"]\n");
    s.push_str(&format!("covariates = {}\n", toml_list(&structured)));
    s.push_str("notes = \"admission_note\"\n");
    for (k, name) in Factors::NAMES.iter().enumerate() {
        let terms: Vec<String> = FACTOR_TEXT[k].terms.iter().map(|t| t.to_string()).collect();
        s.push_str("\n[[concepts]]\n");
        s.push_str(&format!("name = \"{name}\"\n"));
        s.push_str(&format!("terms = {}\n", toml_list(&terms)));
    }
    let design = |s: &mut String, name: &str, terms: &[String], distance: &str, algorithm: &str| {
        s.push_str("\n[[designs]]\n");
        s.push_str(&format!("name = \"{name}\"\n"));
        s.push_str(&format!("score_terms = {}\n", toml_list(terms)));
        s.push_str(&format!("distance = \"{distance}\"\n"));
        s.push_str("caliper = 0.2\n");
        s.push_str("controls = 1\n");
        s.push_str("reuse = false\n");
        s.push_str(&format!("algorithm = \"{algorithm}\"\n"));
    };
    design(&mut s, "structured", &structured, "score", "optimal");
    design(&mut s, "notes-aware", &aware, "score", "optimal");
    design(&mut s, "notes-mahalanobis", &aware, "mahalanobis", "greedy");
    s
}
