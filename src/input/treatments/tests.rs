//! Unit tests of the catalogue and its prescriptions.

use super::*;
use crate::core::site::PatchId;

fn patch(access: Access, herbicide: Herbicide, cost_factor: f64) -> Patch {
    Patch {
        id: PatchId(0),
        label: "T".into(),
        x: 0.0,
        y: 0.0,
        stems: 100.0,
        area_ha: None,
        outline: None,
        site: Site {
            access,
            herbicide,
            cost_factor,
            ..Site::default()
        },
        pressure_override: None,
        suitability: None,
        by_class: None,
    }
}

#[test]
fn builtin_catalogue_is_valid_and_offers_no_cut_only_method() {
    let (c, _) = Catalogue::load(None).unwrap();
    assert!(c.methods.len() >= 4);
    assert!(
        c.methods.iter().all(|m| !m.id.contains("cut")),
        "cutting alone must not be offered"
    );
    assert!(
        c.methods.iter().any(|m| !m.herbicide),
        "a non-herbicide method for prohibited sites"
    );
}

/// The built-in catalogue as it was before size classes (tests/fixtures/one_class).
const ONE_CLASS: &str = include_str!("../../../tests/fixtures/one_class/treatments.toml");

#[test]
fn cost_and_hours_follow_the_formula() {
    let c = Catalogue::parse(ONE_CLASS, "one class").unwrap();
    let choices = choices_for(&c, &patch(Access::Open, Herbicide::Allowed, 1.5), false);
    let traps = c.methods.iter().filter(|m| m.sink_kill.is_some()).count();
    assert_eq!(
        choices.len(),
        c.methods.len() - traps,
        "trap trees only on request"
    );
    let with_traps = choices_for(&c, &patch(Access::Open, Herbicide::Allowed, 1.5), true);
    assert_eq!(with_traps.len(), c.methods.len());
    for ch in &with_traps {
        let m = c.method(ch.method);
        assert!(
            (ch.cost - (m.cost_per_patch + m.cost_per_stem * 100.0) * 1.5).abs() <= 0.005 + 1e-9
        );
        assert!((ch.hours - m.hours_per_stem * 100.0).abs() < 1e-9);
        // r = (1 - e)(1 - sink kill): the kept stems are host, but insects landing there die.
        let sink = m.sink_kill.unwrap_or(0.0);
        assert!((ch.remaining - (1.0 - m.effectiveness) * (1.0 - sink)).abs() < 1e-12);
    }
}

#[test]
fn eligibility_and_site_cautions() {
    let (c, _) = Catalogue::load(None).unwrap();
    assert!(choices_for(&c, &patch(Access::Denied, Herbicide::Allowed, 1.0), false).is_empty());
    let prohibited = choices_for(&c, &patch(Access::Open, Herbicide::Prohibited, 1.0), false);
    assert!(!prohibited.is_empty() && prohibited.iter().all(|ch| !c.method(ch.method).herbicide));
    let restricted = patch(Access::Permission, Herbicide::Restricted, 1.0);
    let herbicide_method = c.methods.iter().find(|m| m.herbicide).unwrap();
    let codes = caution_codes(herbicide_method, &restricted);
    assert!(
        codes.contains(&"RESTRICTED_SITE")
            && codes.contains(&"PERMISSION")
            && codes.contains(&"LABEL")
    );
}

/// Size classes from the methods notes section 8 (Penn State Extension, USDA Forest Service
/// 2014, from memory): no built-in method is used on a class it does not cover, and the
/// prescription's numbers follow its formula.
#[test]
fn prescriptions_cover_only_their_classes() {
    let (c, _) = Catalogue::load(None).unwrap();
    assert_eq!(c.class_ids(), ["seedlings", "saplings", "trees"]);
    let mut p = patch(Access::Open, Herbicide::Allowed, 1.0);
    p.by_class = Some(vec![60.0, 30.0, 10.0]);
    let choices = choices_for(&c, &p, true);
    assert!(!choices.is_empty());
    for ch in &choices {
        for class in 0..3 {
            if let Some(m) = ch.method_for(class) {
                assert!(
                    c.cover(m, class).is_some(),
                    "{} on class {class}",
                    c.method(m).id
                );
            }
        }
        assert!(
            ch.per_class.iter().any(|&m| m != LEAVE),
            "no all-leave choice"
        );
        // Cost: fixed cost of each distinct method + per-class stems x cost per stem.
        let methods = ch.methods();
        let mut cost: f64 = methods.iter().map(|&m| c.method(m).cost_per_patch).sum();
        let mut remaining = 0.0;
        // Host weights 1, 2, 8 (models/treatments.toml): host 60 + 60 + 80 = 200.
        let w = c.host_weights();
        assert_eq!(w, [1.0, 2.0, 8.0]);
        for class in 0..3 {
            let n = p.by_class.as_ref().unwrap()[class];
            let share = n * w[class] / 200.0;
            match ch.method_for(class) {
                Some(m) => {
                    cost += n * c.cover(m, class).unwrap().0;
                    remaining += share * c.method(m).remaining();
                }
                None => remaining += share,
            }
        }
        assert!((ch.cost - cost).abs() <= 0.005 + 1e-9);
        assert!((ch.remaining - remaining).abs() < 1e-12);
    }
    // No choice is dominated by another.
    for a in &choices {
        assert!(!choices.iter().any(|b| b != a
            && b.cost <= a.cost
            && b.hours <= a.hours
            && b.remaining <= a.remaining));
    }
    // Only trees: only stem injection (or trap trees) is applied, to the trees.
    p.by_class = Some(vec![0.0, 0.0, 10.0]);
    for ch in choices_for(&c, &p, true) {
        let id = &c.method(ch.method).id;
        assert!(id == "stem_injection" || id == "trap_tree", "{id}");
    }
    // No herbicide: only pulling, on seedlings; the rest is left.
    let mut p = patch(Access::Open, Herbicide::Prohibited, 1.0);
    p.by_class = Some(vec![60.0, 30.0, 10.0]);
    let choices = choices_for(&c, &p, false);
    assert_eq!(choices.len(), 1);
    assert_eq!(c.method(choices[0].method).id, "pull_seedlings");
    // Seedlings are 60 of 200 host units (weights 1, 2, 8).
    assert!((choices[0].remaining - (0.3 * 0.4 + 0.7)).abs() < 1e-12);
    // Counted only as stems: the default mix 60/30/10 applies.
    p.by_class = None;
    assert_eq!(c.stems_by_class(&p), (vec![60.0, 30.0, 10.0], true));
}

#[test]
fn size_class_mistakes_are_refused() {
    let (_, text) = Catalogue::load(None).unwrap();
    for (from, to, says) in [
        (
            "size_classes = [\"saplings\"]",
            "size_classes = [\"sapling\"]",
            "unknown size class",
        ),
        ("size_classes = [\"saplings\"]", "", "no size_classes"),
        ("default_share = 0.10", "default_share = 0.20", "sum to 1"),
        (
            "hours_per_stem = 0.08 }",
            "hours_per_steem = 0.08 }",
            "line",
        ),
    ] {
        let bad = text.replacen(from, to, 1);
        let e = Catalogue::parse(&bad, "t").unwrap_err().to_string();
        assert!(e.contains(says), "{from} -> {to}: {e}");
    }
    let (mut c, _) = Catalogue::load(None).unwrap();
    let mut mix = BTreeMap::new();
    mix.insert("trees".to_string(), 1.0);
    c.set_default_mix(&mix).unwrap();
    assert_eq!(c.default_mix, [0.0, 0.0, 1.0]);
    mix.insert("poles".to_string(), 0.0);
    assert!(c.set_default_mix(&mix).is_err());
}

#[test]
fn invalid_catalogues_are_refused() {
    let base = "[[method]]\nid = \"a\"\nlabel = \"a\"\neffectiveness = 0.5\ncost_per_stem = 1\ncost_per_patch = 1\nhours_per_stem = 0\nherbicide = false\nmonths = [7]\n";
    assert!(Catalogue::parse(base, "t").is_ok());
    assert!(Catalogue::parse(&base.replace("0.5", "-0.1"), "t").is_err());
    assert!(Catalogue::parse(&base.replace("[7]", "[13]"), "t").is_err());
    assert!(
        Catalogue::parse(&format!("{base}{base}"), "t")
            .unwrap_err()
            .to_string()
            .contains("duplicate")
    );
    assert!(
        Catalogue::parse(
            &base.replace("months = [7]", "months = [7]\ncautions = [\"NOPE\"]"),
            "t"
        )
        .is_err()
    );
}

/// Largest-remainder (Hamilton) rounding, common practice for shares that must add up: the
/// whole stems add up to the rounded total, each within one of its count.
#[test]
fn whole_stems_add_up() {
    // 504 stems as 302.6, 151.1, 50.3: floors 503, the missing stem goes to the largest
    // fraction (0.6).
    let counts = [302.6, 151.1, 50.3];
    assert_eq!(whole_stems(&counts, 504.0), [303.0, 151.0, 50.0]);
    // 302.3, 151.3, 50.4 (504): floors 503, the stem goes to 50.4.
    assert_eq!(
        whole_stems(&[302.3, 151.3, 50.4], 504.0),
        [302.0, 151.0, 51.0]
    );
    for total in [0.0, 1.0, 7.0, 105.0, 1633.0, 99_999.0] {
        let counts = [0.6 * total, 0.3 * total, 0.1 * total];
        let whole = whole_stems(&counts, total);
        assert_eq!(whole.iter().sum::<f64>(), total, "{total}");
        for (w, n) in whole.iter().zip(counts) {
            assert!((w - n).abs() < 1.0, "{total}: {w} for {n}");
        }
    }
}
