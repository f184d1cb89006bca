//! The standing safety and legal cautions, by code. Every run prints them and writes
//! `cautions.txt`; each plan row lists the codes that apply to it. The wording follows the
//! extension guidance collected in the methods notes (Penn State Extension, Rutgers Cooperative
//! Extension, USDA Forest Service 2014) and defers to local codes and licensed practice.

/// One caution: a short code for tables and the full text for people.
#[derive(Debug, Clone, Copy)]
pub struct Caution {
    pub code: &'static str,
    pub text: &'static str,
}

/// Every caution the tool knows, standing ones first.
pub const ALL: &[Caution] = &[
    Caution {
        code: "LABEL",
        text: "The pesticide label is the law: use a product only as its label directs, at the labelled rate, on labelled sites.",
    },
    Caution {
        code: "LICENCE",
        text: "Licensing: restricted-use products, and most work on land you do not own, need a certified or licensed applicator; check your state's rules before hiring or applying.",
    },
    Caution {
        code: "PPE",
        text: "Personal protective equipment as the label requires; tree-of-heaven sap irritates skin, so wear gloves and long sleeves when cutting or pulling.",
    },
    Caution {
        code: "WATER",
        text: "Water and sensitive sites: keep the label's buffers from streams, ponds, wells and wetlands, or use a product labelled for aquatic sites; some basal-bark formulations are not registered near water. On a plan row, WATER marks a site within the buffer of a water feature of the water layer.",
    },
    Caution {
        code: "DRIFT",
        text: "Drift and non-target plants: do not spray in wind or heat that carries product off target; protect desirable plants, gardens and crops.",
    },
    Caution {
        code: "FOLLOWUP",
        text: "Follow-up: root suckers and survivors usually need treatment for two or three more seasons; plan and budget the return visits.",
    },
    Caution {
        code: "FELL30",
        text: "Do not fell treated stems until 30 days or more after treatment, so the herbicide reaches the roots; cutting a live tree-of-heaven without herbicide makes it sucker.",
    },
    Caution {
        code: "QUARANTINE",
        text: "Quarantine: in a spotted lanternfly quarantine area, logs, stumps, brush and firewood are regulated articles; check the rules (and any permit or compliance agreement) before moving wood or equipment out.",
    },
    Caution {
        code: "LOCAL",
        text: "Defer to local codes and licensed practice: municipal, state and landowner rules override anything in this plan.",
    },
    Caution {
        code: "RESTRICTED_SITE",
        text: "Restricted site (e.g. near a school, water supply or sensitive habitat): herbicide use is allowed only under the site's extra conditions; confirm them with the site manager before work.",
    },
    Caution {
        code: "PERMISSION",
        text: "Landowner permission is needed before entering or treating this site; contact the listed owner or manager first.",
    },
    Caution {
        code: "NO_HERBICIDE",
        text: "NO HERBICIDE ON THIS SITE: the site's rules forbid herbicide; use only the mechanical method planned, and bring no herbicide onto the site.",
    },
    Caution {
        code: "WATER_UNCHECKED",
        text: "No water layer was given, so this site was not checked for nearby water: look for streams, ponds, wells and wetlands before herbicide work and keep the label's buffers.",
    },
];

/// The codes every run shows, in order.
pub const STANDING: &[&str] = &[
    "LABEL",
    "LICENCE",
    "PPE",
    "WATER",
    "DRIFT",
    "FOLLOWUP",
    "FELL30",
    "QUARANTINE",
    "LOCAL",
];

/// Find a caution by code.
pub fn lookup(code: &str) -> Option<&'static Caution> {
    ALL.iter()
        .find(|c| c.code.eq_ignore_ascii_case(code.trim()))
}

/// All known codes.
pub fn codes() -> Vec<&'static str> {
    ALL.iter().map(|c| c.code).collect()
}

/// The text of `cautions.txt` and of the block printed after every run.
pub fn standing_text() -> String {
    let mut out = String::from(
        "STANDING CAUTIONS - read before any treatment\n\
         This plan says where treatment buys the most risk reduction; it is not a pesticide\n\
         recommendation. Apply any product per its label.\n\n",
    );
    for code in STANDING {
        if let Some(c) = lookup(code) {
            out.push_str(&format!("[{}] {}\n", c.code, c.text));
        }
    }
    out.push_str("\nSite codes that can appear in plan.csv:\n");
    for c in ALL.iter().filter(|c| !STANDING.contains(&c.code)) {
        out.push_str(&format!("[{}] {}\n", c.code, c.text));
    }
    out
}

/// The line on whether sites were checked for water, for cautions.txt and the reports.
pub fn site_check_text(water_checked: bool) -> &'static str {
    if water_checked {
        "Water: sites were checked against the water layer(s) given; plan rows within a water buffer carry WATER and get only methods allowed near water. The label's own buffer governs where it is wider."
    } else {
        "Water: NO WATER LAYER WAS GIVEN, so no site was checked for nearby water; herbicide rows carry WATER_UNCHECKED. Give `--water streams.gpkg` (streams, ponds, wells, wetlands) to check them."
    }
}

/// The caution on every survey output a crew reads (`hostcut survey`).
pub const SURVEY: &str = "Quarantine: do not move infested material, wood, brush, stone or equipment carrying egg masses out of the site; scrape and destroy egg masses only where local rules allow; report every find (photo, place, date) to the state department of agriculture; follow local codes, quarantine rules and the landowner's permission.";
