//! The shop's record of a repair beside the crossover's figures: when the speaker came in and
//! left, the customer's complaint and what was found, labour, warranty, a condition grade for
//! a buyer, and the inspection of what is not the crossover.

use super::Date;

/// What an inspection found of one item.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "snake_case")]
pub enum InspectionResult {
    Pass,
    Fail,
    Fixed,
    NotChecked,
    /// The model has no such item (a speaker built without a protection device): nothing to
    /// check, which "not checked" would leave open.
    NoneFitted,
}

impl InspectionResult {
    pub const ALL: [(&'static str, InspectionResult); 5] = [
        ("pass", InspectionResult::Pass),
        ("fail", InspectionResult::Fail),
        ("fixed", InspectionResult::Fixed),
        ("not checked", InspectionResult::NotChecked),
        ("none fitted", InspectionResult::NoneFitted),
    ];

    pub fn words(self) -> &'static str {
        match self {
            InspectionResult::Pass => "pass",
            InspectionResult::Fail => "fail",
            InspectionResult::Fixed => "fixed",
            InspectionResult::NotChecked => "not checked",
            InspectionResult::NoneFitted => "none fitted",
        }
    }
}

/// The items a passive loudspeaker's inspection covers unless the shop says otherwise: the
/// key a job writes, and the item in words.
pub const DEFAULT_INSPECTION: [(&str, &str); 11] = [
    ("surrounds", "Driver surrounds"),
    ("spiders", "Driver spiders"),
    ("coil_rub", "Voice-coil rub"),
    ("dust_caps", "Dust caps"),
    ("protection", "Protection devices (self-resetting fuses, lamps)"),
    ("terminals", "Input terminals"),
    ("wiring", "Internal wiring"),
    ("solder_joints", "Solder joints"),
    ("polarity", "Polarity of each driver"),
    ("cabinet", "Cabinet"),
    ("grille", "Grille"),
];

#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct InspectionItem {
    /// The key as written (a default item's, or the shop's own).
    pub key: String,
    /// The item in words.
    pub item: String,
    pub result: InspectionResult,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub note: Option<String>,
}

/// When a photograph was taken.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "lowercase")]
pub enum Taken {
    Before,
    After,
}

/// A photograph the job lists: the file (read whole, kept byte for byte among the inputs),
/// its caption, when it was taken, and whether the customer's report shows it too.
#[derive(Debug, Clone, PartialEq)]
pub struct Photo {
    pub file: String,
    pub caption: String,
    pub taken: Taken,
    pub customer: bool,
}

/// The largest photograph a job may list (bytes).
pub const MAX_PHOTO_BYTES: usize = 25 * 1024 * 1024;

/// The service record's own fields; all empty for a job that gives none.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct Service {
    /// The job has a `service` section (the record's sign-off shows).
    pub given: bool,
    pub received: Option<Date>,
    pub returned: Option<Date>,
    /// The customer's complaint, in their words.
    pub complaint: Option<String>,
    /// What the shop found.
    pub finding: Option<String>,
    pub labour_hours: Option<f64>,
    pub warranty: Option<String>,
    /// The shop's condition grade for a buyer, in its own words.
    pub condition: Option<String>,
    /// The inspection, default items first (those the job does not give are "not checked"),
    /// then the shop's own; empty when the job has no inspection.
    pub inspection: Vec<InspectionItem>,
    pub photos: Vec<Photo>,
}

impl Service {
    pub fn is_empty(&self) -> bool {
        *self == Service::default()
    }
}

/// A shop's settings, written once in a file beside its jobs and named by each job; the job's
/// own values win.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct ShopSettings {
    pub name: Option<String>,
    pub address: Option<String>,
    pub contact: Option<String>,
    pub warranty: Option<String>,
    pub labour_rate: Option<crate::money::Money>,
    pub currency: Option<String>,
    /// The shop's logo, an image file beside the jobs, as written.
    pub logo: Option<String>,
    pub tax: Option<Tax>,
}

/// A tax an invoice adds to its subtotal: its name ("VAT") and its rate in hundredths of a
/// percent (20 % is 2000), exact.
#[derive(Debug, Clone, PartialEq)]
pub struct Tax {
    pub name: String,
    pub hundredths_of_percent: i64,
}
