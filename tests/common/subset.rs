//! The fixed subset of the relatedness development data (`tests/fixtures/relatedness/subset.json`,
//! written by `scripts/make_relatedness_sets.py` from music21 10.5.1's public-domain
//! collections): real melodies as event lists, with their set, source and tune family.
#![allow(dead_code, clippy::unwrap_used, clippy::expect_used)]

use super::{fixture, Event};
use serde_json::Value;

/// One melody of the subset.
pub struct SubsetTune {
    /// `dance`, `chorales` or `background`.
    pub set: String,
    /// Collection, file and tune number.
    pub source: String,
    /// The tune family (hand-checked), for members of one.
    pub family: Option<String>,
    /// Meter as (beats, beat type).
    pub meter: (u32, u32),
    /// Pitches (or rests) and lengths in the subset's divisions.
    pub events: Vec<Event>,
}

/// Every melody of the subset and the divisions per quarter note its lengths count in.
pub fn subset() -> (Vec<SubsetTune>, u32) {
    let text = std::fs::read_to_string(fixture("relatedness/subset.json")).unwrap();
    let doc: Value = serde_json::from_str(&text).unwrap();
    let divisions = doc["divisions"].as_u64().unwrap() as u32;
    let tunes = doc["melodies"]
        .as_array()
        .unwrap()
        .iter()
        .map(|m| {
            let meter = m["meter"].as_array().unwrap();
            SubsetTune {
                set: m["set"].as_str().unwrap_or("background").to_string(),
                source: m["source"].as_str().unwrap().to_string(),
                family: m["family"].as_str().map(str::to_string),
                meter: (
                    meter[0].as_u64().unwrap() as u32,
                    meter[1].as_u64().unwrap() as u32,
                ),
                events: m["events"]
                    .as_array()
                    .unwrap()
                    .iter()
                    .map(|e| {
                        (
                            e[0].as_i64().map(|p| p as i32),
                            e[1].as_u64().unwrap() as u32,
                        )
                    })
                    .collect(),
            }
        })
        .collect();
    (tunes, divisions)
}
