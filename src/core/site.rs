//! The rules of the place a patch stands on, and the patch id every stage after `patches` uses.
//! Shared by the input readers (layers, inventory, patches) and every later stage, so it lives in
//! the earliest stage that needs it.

/// Dense index of a patch, 0..n, shared by every stage after this one.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub struct PatchId(pub u32);

impl PatchId {
    pub fn index(self) -> usize {
        self.0 as usize
    }
}

/// Whether a crew may enter.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Access {
    Open,
    Permission,
    Denied,
}

impl Access {
    pub fn parse(text: &str) -> Option<Access> {
        match text.trim().to_ascii_lowercase().as_str() {
            "open" => Some(Access::Open),
            "permission" => Some(Access::Permission),
            "denied" => Some(Access::Denied),
            _ => None,
        }
    }
    pub fn as_str(self) -> &'static str {
        match self {
            Access::Open => "open",
            Access::Permission => "permission",
            Access::Denied => "denied",
        }
    }
}

/// Whether herbicide may be used on the site.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Herbicide {
    Allowed,
    Restricted,
    Prohibited,
}

impl Herbicide {
    pub fn parse(text: &str) -> Option<Herbicide> {
        match text.trim().to_ascii_lowercase().as_str() {
            "allowed" => Some(Herbicide::Allowed),
            "restricted" => Some(Herbicide::Restricted),
            "prohibited" => Some(Herbicide::Prohibited),
            _ => None,
        }
    }
    pub fn as_str(self) -> &'static str {
        match self {
            Herbicide::Allowed => "allowed",
            Herbicide::Restricted => "restricted",
            Herbicide::Prohibited => "prohibited",
        }
    }
}

/// Whether water lies within the buffer of a patch.
#[derive(Debug, Clone, PartialEq)]
pub enum Water {
    /// No water layer was given: the site was not checked.
    Unchecked,
    /// No water feature of the water layers lies within its buffer.
    Clear,
    /// Within the buffer of these water features (e.g. `Mill Creek (12 m)`).
    Near(String),
}

impl Water {
    pub fn as_str(&self) -> &'static str {
        match self {
            Water::Unchecked => "unchecked",
            Water::Clear => "clear",
            Water::Near(_) => "near",
        }
    }
}

/// The rules of the place a patch stands on.
#[derive(Debug, Clone, PartialEq)]
pub struct Site {
    pub parcel: String,
    pub access: Access,
    pub herbicide: Herbicide,
    pub cost_factor: f64,
    pub contact: String,
    /// Why herbicide is restricted here (the parcel's rule, a sensitive site nearby), for crews
    /// and bidders; `None` unless `herbicide` is restricted.
    pub restriction: Option<String>,
    pub water: Water,
}

impl Default for Site {
    fn default() -> Self {
        Site {
            parcel: String::new(),
            access: Access::Open,
            herbicide: Herbicide::Allowed,
            cost_factor: 1.0,
            contact: String::new(),
            restriction: None,
            water: Water::Unchecked,
        }
    }
}

impl Site {
    /// The site's rules in words for people (plan.csv `site_notes`, work orders, the scope of
    /// work): no herbicide, restricted conditions, water nearby. Empty for an open site with no
    /// special rule.
    pub fn notes(&self) -> String {
        let mut notes = Vec::new();
        match self.herbicide {
            Herbicide::Prohibited => notes.push("NO HERBICIDE ON THIS SITE".to_string()),
            Herbicide::Restricted => notes.push(format!(
                "restricted site: herbicide only under the site's conditions ({})",
                self.restriction
                    .as_deref()
                    .unwrap_or("confirm them with the site manager")
            )),
            Herbicide::Allowed => {}
        }
        if let Water::Near(what) = &self.water {
            notes.push(format!("near water: {what}"));
        }
        if self.access == Access::Permission {
            notes.push(if self.contact.is_empty() {
                "landowner permission first".to_string()
            } else {
                format!(
                    "landowner permission first: call {} before entry",
                    self.contact
                )
            });
        }
        notes.join("; ")
    }
}
