//! Renders every chart at the sizes the page and the report use, from
//! invented demo-like input, and checks each renders. With
//! `PAIRSIGHT_CHART_DIR` set, the SVGs are also written there so a person can
//! look at them (e.g. after `rsvg-convert` to PNG).

use super::*;

fn save(name: &str, svg: &str) {
    assert!(
        svg.starts_with("<svg") && svg.trim_end().ends_with("</svg>"),
        "{name}"
    );
    if let Some(dir) = std::env::var_os("PAIRSIGHT_CHART_DIR") {
        let path = std::path::Path::new(&dir).join(name);
        std::fs::write(&path, svg).unwrap();
    }
}

/// Invented covariates of the demo scenario (a discharge-planning visit).
fn demo_love(n_extra: usize, designs: usize) -> LoveInput {
    let base: [(&str, bool, f64, [f64; 3]); 12] = [
        ("age", false, 0.31, [0.04, 0.02, 0.06]),
        ("sex: female", false, 0.08, [0.03, 0.05, 0.01]),
        ("ward: cardiology", false, 0.22, [0.07, 0.03, 0.09]),
        (
            "admission route: emergency",
            false,
            0.41,
            [0.05, 0.08, 0.02],
        ),
        (
            "prior admissions, last year",
            false,
            0.37,
            [0.09, 0.04, 0.12],
        ),
        ("comorbidity count", false, 0.29, [0.06, 0.02, 0.04]),
        ("lives alone", true, 0.46, [0.38, 0.05, 0.07]),
        ("walking aid / frail", true, 0.35, [0.27, 0.06, 0.03]),
        ("recent fall", true, 0.28, [0.24, 0.02, 0.05]),
        ("cognitive impairment", true, 0.19, [0.17, 0.08, 0.01]),
        ("poor medication adherence", true, 0.24, [0.21, 0.03, 0.06]),
        ("unstable housing", true, 0.15, [0.13, 0.04, 0.02]),
    ];
    let mut terms: Vec<LoveTerm> = base
        .iter()
        .map(|(l, n, b, _)| LoveTerm {
            label: l.to_string(),
            from_note: *n,
            before: Some(*b),
        })
        .collect();
    let mut after: Vec<Vec<Option<f64>>> = (0..designs)
        .map(|d| base.iter().map(|(_, _, _, a)| Some(a[d % 3])).collect())
        .collect();
    for i in 0..n_extra {
        terms.push(LoveTerm {
            label: format!("note latent dimension {}", i + 1),
            from_note: true,
            before: Some(0.02 + ((i * 37) % 23) as f64 / 60.0),
        });
        for (d, a) in after.iter_mut().enumerate() {
            a.push(Some(0.005 + ((i * 13 + d * 7) % 17) as f64 / 160.0));
        }
    }
    terms.push(LoveTerm {
        label: "sodium (mmol/L)".into(),
        from_note: false,
        before: None,
    });
    for a in after.iter_mut() {
        a.push(None);
    }
    let names = ["structured only", "structured + notes", "note-cosine blend"];
    LoveInput {
        title: Some("Covariate balance".into()),
        terms,
        designs: after
            .into_iter()
            .enumerate()
            .map(|(d, after)| LoveDesign {
                name: names[d % 3].into(),
                after,
            })
            .collect(),
        ..LoveInput::default()
    }
}

#[test]
fn gallery_renders() {
    let one = demo_love(0, 1);
    save("love-1.svg", &love_svg(&one, 800, 600).unwrap());
    let three = demo_love(0, 3);
    save("love-3.svg", &love_svg(&three, 800, 600).unwrap());
    let tall = demo_love(32, 3);
    let h = love_height_hint(tall.terms.len());
    save("love-tall.svg", &love_svg(&tall, 800, h).unwrap());
    let mut six = demo_love(0, 3);
    for k in 3..6 {
        let mut d = six.designs[k % 3].clone();
        d.name = format!("variant {k} with a rather long design name");
        six.designs.push(d);
    }
    six.terms[0].label =
        "a very long covariate label that goes on and on past any sensible width".into();
    save("love-6.svg", &love_svg(&six, 800, 600).unwrap());
    save(
        "overlap-3.svg",
        &overlap_svg(&overlap::tests::sample(2), 800, 600).unwrap(),
    );
    save(
        "overlap-4.svg",
        &overlap_svg(&overlap::tests::sample(3), 800, 600).unwrap(),
    );
    save(
        "overlap-1.svg",
        &overlap_svg(&overlap::tests::sample(0), 800, 600).unwrap(),
    );
    save(
        "sensitivity.svg",
        &sensitivity_svg(&sensitivity::tests::sample(), 800, 600).unwrap(),
    );
}
