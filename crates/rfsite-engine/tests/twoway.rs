//! Two-way verdicts (issue 13): a life-safety floor passes only when the network hears the
//! handsets too.
//!
//! Sources: the uplink at the head end is DL − P_ant + P_hs + G_hs − 20 log10(f_ul/f_dl)
//! (reciprocity of the path; the frequency term of ITU-R P.525); the figures below are
//! worked by hand from it.

mod common;

use common::assess;
use rfsite_plugin::Severity;

/// One open 20 m x 10 m room, a 20 dBm head-end output into a ceiling antenna in the
/// middle: at 770 MHz the whole floor is far above -95 dBm + margins (free space over
/// 11 m is 51 dB, so every point is above -35 dBm).
fn site(life_safety: bool, uplink: &str) -> String {
    format!(
        r#"
[site]
id = "two-way"
name = "Two-way test"
units = "metres"
report_date = "2026-01-15"
[prediction]
grid_step = 0.5
[[floors]]
id = "L1"
elevation = 0.0
height = 3.0
outline = [[0, 0], [20, 0], [20, 10], [0, 10]]
[[services]]
id = "ps"
freq_mhz = 770.0
threshold_dbm = -95.0
target_general = 0.95
target_critical = 0.99
life_safety = {life_safety}
{uplink}
[[transmitters]]
id = "T1"
service = "ps"
floor = "L1"
position = [10, 5]
power_dbm = 20.0
"#
    )
}

#[test]
fn strong_downlink_unreachable_uplink_fails_on_uplink() {
    // The head end needs -20 dBm: a 35 dBm portable at -35 dBm of downlink gives at best
    // -35 - 20 + 35 - 0.33 = -20.3 dBm there, short everywhere.
    let a = assess(&site(
        true,
        "uplink = { freq_mhz = 800.0, handset_power_dbm = 35.0, head_end_required_dbm = -20.0 }",
    ));
    let f = &a.services[0].floors[0];
    assert_eq!(f.downlink_pass, Some(true), "{:?}", f.reasons);
    let ul = f.uplink.as_ref().unwrap();
    assert!(ul.assessed && !ul.pass);
    assert!(!f.pass && !a.services[0].pass);
    assert!(f.reasons.iter().any(|r| r.criterion.starts_with("uplink-")));
    let finding = a
        .findings
        .iter()
        .find(|x| x.id == "uplink-ps-L1")
        .expect("uplink finding");
    assert_eq!(finding.severity, Severity::Critical);
    // Shift by hand: 35 + 0 - 0.3320 - 20 - (-20) + (-95) = -60.33 dB.
    let shift = a.services[0].uplink.as_ref().unwrap().shift_db;
    assert!((shift - (-60.332)).abs() < 0.01, "{shift}");
}

#[test]
fn reachable_uplink_passes_both_ways() {
    let a = assess(&site(
        true,
        "uplink = { freq_mhz = 800.0, handset_power_dbm = 35.0, head_end_required_dbm = -110.0 }",
    ));
    let f = &a.services[0].floors[0];
    assert!(f.pass && f.uplink.as_ref().unwrap().pass, "{:?}", f.reasons);
}

#[test]
fn life_safety_without_uplink_data_is_not_passed() {
    let a = assess(&site(true, ""));
    let f = &a.services[0].floors[0];
    assert_eq!(f.downlink_pass, Some(true));
    assert!(!f.pass, "a life-safety floor with no uplink data passed");
    assert!(f
        .reasons
        .iter()
        .any(|r| r.criterion == "uplink-not-assessed"));
    assert!(a
        .findings
        .iter()
        .any(|x| x.id == "uplink-not-assessed-ps-L1" && x.severity == Severity::Critical));
    // A service that is not life safety keeps its downlink verdict, the uplink marked
    // as not assessed.
    let b = assess(&site(false, ""));
    let g = &b.services[0].floors[0];
    assert!(g.pass && !g.uplink.as_ref().unwrap().assessed);
}
