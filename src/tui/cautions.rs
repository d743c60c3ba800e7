//! The cautions every analyst reads: on the bench screen and at the end of help.

/// The cautions of the design brief (§6), shown on the bench screen and in help.
pub const CAUTIONS: [&str; 3] = [
    "Broken glass cuts: handle fragments with cut-resistant gloves and eye protection; \
     tempered glass can keep breaking.",
    "Estimates from fracture mirrors carry the uncertainty of the constants and readings.",
    "This tool supports, and does not replace, a qualified investigator; safety-glazing rules \
     and conclusions that carry legal weight belong to local codes and licensed practice.",
];
