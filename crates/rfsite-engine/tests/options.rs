//! Remediation options, predicted and graded like the site itself (issue 12).
//!
//! Sources: the verdicts come from the grading plugin's rule sets (their numbers carry
//! their own sources); "the fewest antennas" is checked against trying every subset of the
//! candidates (exhaustive enumeration); "equals a re-run of the edited site" against the
//! engine run on the site file edited by hand.

mod common;

use common::{assess, loaded};

use rfsite_model::{MaterialLibrary, Site, SiteChange, SourceFile};
use rfsite_plugin::{Assessment, Remediation};

fn option<'a>(a: &'a Assessment, id: &str) -> &'a Remediation {
    a.remediation
        .iter()
        .find(|r| r.id == id)
        .unwrap_or_else(|| {
            panic!(
                "option {id} in {:?}",
                a.remediation.iter().map(|r| &r.id).collect::<Vec<_>>()
            )
        })
}

const HEAD: &str = r#"
[site]
id = "options-test"
name = "Options test"
units = "metres"
report_date = "2026-01-15"
[prediction]
grid_step = 0.5
[[floors]]
id = "L1"
elevation = 0.0
height = 3.0
outline = [[0, 0], [30, 0], [30, 20], [0, 20]]
[[services]]
id = "lte"
freq_mhz = 1800.0
threshold_dbm = -100.0
target_general = 0.95
target_critical = 0.99
[[transmitters]]
id = "T1"
service = "lte"
floor = "L1"
position = [5, 10]
power_dbm = 10.0
"#;

/// A closed steel room (x 20–28, y 8–16): 64 of 600 m², more than the 5 % the 95 %
/// target allows, and steel blocks more than the crossing cap.
const VAULT: &str = r#"
[[walls]]
id = "vault"
floor = "L1"
material = "metal"
thickness = 0.002
points = [[20, 8], [28, 8], [28, 16], [20, 16]]
closed = true
"#;

fn in_or_next_to_vault(p: [f64; 2]) -> bool {
    (19.0..=29.0).contains(&p[0]) && (7.0..=17.0).contains(&p[1])
}

#[test]
fn one_shadowed_room_gets_its_antenna_and_the_floor_passes() {
    let a = assess(&format!("{HEAD}{VAULT}"));
    let before = &a.services[0];
    assert!(
        !before.floors[0].pass,
        "the vault makes the floor fail as it is"
    );
    let d = option(&a, "design-lte");
    // In the room, and any other one next to it (the room also shadows the strip east
    // of it from T1).
    let inside = |p: [f64; 2]| (20.0..=28.0).contains(&p[0]) && (8.0..=16.0).contains(&p[1]);
    assert!(
        d.antennas.iter().any(|t| inside(t.position)),
        "{:?}",
        d.antennas
    );
    assert!(
        d.antennas.iter().all(|t| in_or_next_to_vault(t.position)),
        "{:?}",
        d.antennas
    );
    let after = d.after.as_ref().expect("the engine predicted the option");
    assert!(after.passes && after.services[0].floors[0].pass);
    assert!(d.recommended);
    // The finding of the failing floor is resolved by the option.
    let f = a
        .findings
        .iter()
        .find(|f| f.id == "coverage-lte-L1")
        .unwrap();
    assert!(f.remedies.contains(&d.id));
}

/// The designed antennas pasted into the site as `[[transmitters]]` give the option's
/// verdicts and levels (no survey: nothing is carried over).
#[test]
fn pasting_the_designed_antennas_reproduces_the_option() {
    let text = format!("{HEAD}{VAULT}");
    let a = assess(&text);
    let d = option(&a, "design-lte");
    let mut pasted = text.clone();
    for t in &d.antennas {
        pasted.push_str(&format!(
            "[[transmitters]]\nid = {:?}\nservice = {:?}\nfloor = {:?}\nposition = [{:?}, {:?}]\nheight = {:?}\npower_dbm = {:?}\ncable_loss_db = {:?}\nconnector_loss_db = {:?}\nantenna_gain_dbi = {:?}\npattern = {:?}\n",
            t.id, t.service, t.floor, t.position[0], t.position[1], t.height, t.power_dbm,
            t.cable_loss_db, t.connector_loss_db, t.antenna_gain_dbi, t.pattern
        ));
    }
    let b = assess(&pasted);
    let after = d.after.as_ref().unwrap();
    assert_eq!(b.services, after.services);
    let graded = |x: &rfsite_plugin::CoverageLayer| x.model == b.services[0].model;
    let layers: Vec<_> = b.layers.iter().filter(|l| graded(l)).collect();
    assert_eq!(layers.len(), d.after_layers.len());
    for (x, y) in layers.iter().zip(&d.after_layers) {
        assert_eq!(x.level_dbm.len(), y.level_dbm.len());
        assert!(x
            .level_dbm
            .iter()
            .zip(&y.level_dbm)
            .all(|(p, q)| p.to_bits() == q.to_bits()));
    }
}

/// Two coated glazed screens; the what-if replaces one of them.
const SCREENS: &str = r#"
[[walls]]
id = "screen-a"
floor = "L1"
material = "coated-glazing"
thickness = 0.03
points = [[12, 0], [12, 20]]
[[walls]]
id = "screen-b"
floor = "L1"
material = "coated-glazing"
thickness = 0.03
points = [[22, 0], [22, 20]]
[[walls]]
id = "partition"
floor = "L1"
material = "plasterboard-partition"
thickness = 0.1
points = [[0, 14], [12, 14]]
[[what_if]]
id = "clear-screen-a"
title = "Screen A in uncoated glass"
set_material = [{ walls = ["screen-a"], material = "clear-glazing" }]
"#;

fn parts(site: &Site) -> Vec<(String, String, f64)> {
    site.floors
        .iter()
        .flat_map(|f| &f.parts)
        .map(|p| (p.id.clone(), p.material.clone(), p.thickness_m))
        .collect()
}

#[test]
fn a_glazing_option_changes_exactly_the_walls_it_names() {
    let l = loaded(&format!("{HEAD}{SCREENS}"));
    let w = &l.site.what_ifs[0];
    assert_eq!(
        w.changes,
        vec![SiteChange::SetMaterial {
            walls: vec!["screen-a".into()],
            material: "clear-glazing".into(),
            thickness_m: None
        }]
    );
    let changed = l.site.with_changes(&w.changes);
    let (before, after) = (parts(&l.site), parts(&changed));
    assert_eq!(before.len(), after.len());
    for (b, a) in before.iter().zip(&after) {
        if b.0 == "screen-a" {
            assert_eq!((a.1.as_str(), a.2), ("clear-glazing", b.2));
        } else {
            assert_eq!(a, b);
        }
    }
}

#[test]
fn a_glazing_option_predicts_as_the_edited_site() {
    let text = format!("{HEAD}{SCREENS}");
    let a = assess(&text);
    let opt = option(&a, "clear-screen-a");
    assert_eq!(opt.plugin, "what-if");
    // The site file edited by hand: screen A's material replaced, the what-if removed.
    let edited = text.replacen(
        "id = \"screen-a\"\nfloor = \"L1\"\nmaterial = \"coated-glazing\"",
        "id = \"screen-a\"\nfloor = \"L1\"\nmaterial = \"clear-glazing\"",
        1,
    );
    let edited = &edited[..edited.find("[[what_if]]").unwrap()];
    let b = assess(edited);
    assert_eq!(opt.after.as_ref().unwrap().services, b.services);
    let graded: Vec<_> = b
        .layers
        .iter()
        .filter(|l| l.model == b.services[0].model)
        .collect();
    assert_eq!(graded.len(), opt.after_layers.len());
    for (x, y) in graded.iter().zip(&opt.after_layers) {
        assert!(x
            .level_dbm
            .iter()
            .zip(&y.level_dbm)
            .all(|(p, q)| p.to_bits() == q.to_bits()));
    }
    // And the option did change the prediction behind screen A.
    let base: Vec<_> = a
        .layers
        .iter()
        .filter(|l| l.model == a.services[0].model)
        .collect();
    assert!(base[0]
        .level_dbm
        .iter()
        .zip(&opt.after_layers[0].level_dbm)
        .any(|(p, q)| q > p));
}

/// Two small closed steel rooms, each with one candidate inside, on a coarse candidate
/// grid (at most 12 positions). The rooms' candidates sit 2.3 m from the steel, clear of the
/// λ/16 bands around its standing-wave nulls (at 1800 MHz a point exactly 2.0 m away is on
/// the 24th null, 24·λ/2, and would be skipped).
const TWO_ROOMS: &str = r#"
[[walls]]
id = "room-a"
floor = "L1"
material = "metal"
thickness = 0.002
points = [[9.7, 9.7], [14.3, 9.7], [14.3, 14.3], [9.7, 14.3]]
closed = true
[[walls]]
id = "room-b"
floor = "L1"
material = "metal"
thickness = 0.002
points = [[17.7, 1.7], [22.3, 1.7], [22.3, 6.3], [17.7, 6.3]]
closed = true
[plugins.antenna-design]
spacing = 8.0
head_end = { floor = "L1", position = [1, 1] }
"#;

/// The smallest subset of `levels` (each candidate's level per point) that makes `passes`
/// true with `base`, by trying every subset in order of size (exhaustive enumeration;
/// strongest server: the maximum per point).
fn exhaustive(base: &[f32], levels: &[Vec<f32>], passes: &dyn Fn(&[f32]) -> bool) -> Option<usize> {
    let n = levels.len();
    assert!(n <= 12, "{n} candidates");
    let mut best: Option<usize> = None;
    for mask in 0u32..(1 << n) {
        let k = mask.count_ones() as usize;
        if best.is_some_and(|b| k >= b) {
            continue;
        }
        let mut l = base.to_vec();
        for (_, lv) in levels
            .iter()
            .enumerate()
            .filter(|(c, _)| mask & (1 << c) != 0)
        {
            for (x, y) in l.iter_mut().zip(lv) {
                if !x.is_nan() && *y > *x {
                    *x = *y;
                }
            }
        }
        if passes(&l) {
            best = Some(k);
        }
    }
    best
}

#[test]
fn on_twelve_candidates_the_design_is_the_exhaustive_optimum() {
    use rfsite_plugin_antenna_design::{candidates, floors, options};
    let text = format!("{HEAD}{TWO_ROOMS}");
    let a = assess(&text);
    let d = option(&a, "design-lte");
    assert!(
        d.after.as_ref().unwrap().passes,
        "{}\n{:?}\n{:?}",
        d.detail,
        d.antennas,
        d.after.as_ref().unwrap().services[0].floors[0].reasons
    );
    let l = loaded(&text);
    let site = &l.site;
    let empty = Default::default();
    let ctx = rfsite_plugin::Context {
        site,
        options: &site.plugin_options["antenna-design"],
        earlier: &[],
        surveys: &empty,
        base: None,
    };
    let o = options::read(&ctx).unwrap();
    let reflectors = a
        .extra
        .get("reflection-nulls")
        .and_then(|v| v.get("reflectors"));
    let waves = candidates::standing_waves(reflectors, "lte");
    let spots = candidates::candidates(&site.floors[0], &o, &waves);
    let scene = rfsite_plugin_calibration::scene_for(site);
    let zero = |_: usize, _: f64| 0.0;
    let svc_result = &a.services[0];
    let mut notes = Vec::new();
    let rules = rfsite_plugin_grading::rule_sets(&toml::Table::new(), &mut notes).unwrap();
    let rule = rfsite_plugin_grading::rule_for(&site.services[0], &rules).unwrap();
    let base: Vec<f32> = a
        .layers
        .iter()
        .find(|x| x.model == svc_result.model)
        .unwrap()
        .level_dbm
        .clone();
    let bases = vec![base.clone()];
    let designer = floors::Designer {
        site,
        si: 0,
        model: floors::Model {
            scene: &scene,
            adjust: &zero,
            model: &svc_result.model,
        },
        grade: floors::Grade {
            svc: &site.services[0],
            rule: &rule,
            req: &svc_result.required,
        },
        options: &o,
        waves: &waves,
        base: &bases,
        measured: &[],
        passed: &[false],
    };
    let pred = rfsite_plugin_multi_wall::FloorPredictor::new(site, &scene, 0, 0, &zero);
    let levels: Vec<Vec<f32>> = spots
        .iter()
        .map(|p| pred.levels(&designer.antenna(0, *p, 0), None))
        .collect();
    let grid = pred.grid().clone();
    let optimum = exhaustive(&base, &levels, &|l| designer.passes(0, &grid, l));
    assert_eq!(
        optimum,
        Some(d.antennas.len()),
        "{} candidates",
        spots.len()
    );
    assert!(
        d.antennas.len() >= 2,
        "one antenna per closed room at least"
    );
}

/// A what-if naming what the site does not have is an error at its line and column, with
/// a hint; `check` and `report` share this load.
#[test]
fn a_what_if_with_a_typo_is_located_with_a_hint() {
    let text = format!(
        "{HEAD}{SCREENS}[[what_if]]\nid = \"typo\"\nset_material = [{{ walls = [\"screen-c\"], material = \"clear-glazng\" }}]\nset_power = [{{ transmitter = \"T9\", power_dbm = 20.0 }}]\n"
    );
    let file = SourceFile::new("site.toml", text.as_str());
    let l = rfsite_model::load(&file, &MaterialLibrary::builtin());
    assert!(l.site.is_none());
    let errs: Vec<_> = l
        .diagnostics
        .items
        .iter()
        .filter(|d| d.is_error())
        .collect();
    let line = text.lines().position(|x| x.contains("screen-c")).unwrap() + 1;
    let wall = errs
        .iter()
        .find(|d| d.message.contains("`screen-c`"))
        .expect("wall error");
    assert_eq!(wall.line, line);
    assert!(
        wall.hint.as_deref().unwrap_or("").contains("screen-a"),
        "{:?}",
        wall.hint
    );
    assert!(errs.iter().any(|d| d.message.contains("clear-glazng")
        && d.hint.as_deref().unwrap_or("").contains("clear-glazing")));
    assert!(errs
        .iter()
        .any(|d| d.message.contains("`T9`") && d.hint.as_deref().unwrap_or("").contains("T1")));
}

/// A second transmitter and a screen, with one what-if raising T1's power and one lowering
/// T2's; the first takes the shortcut from the site's own layers, the second a full re-run.
const POWERS: &str = r#"
[[transmitters]]
id = "T2"
service = "lte"
floor = "L1"
position = [25, 10]
power_dbm = 10.0
[[walls]]
id = "screen"
floor = "L1"
material = "coated-glazing"
thickness = 0.03
points = [[15, 0], [15, 20]]
[[what_if]]
id = "raise-t1"
title = "T1 at 16 dBm"
set_power = [{ transmitter = "T1", power_dbm = 16.0 }]
[[what_if]]
id = "lower-t2"
title = "T2 at 4 dBm"
set_power = [{ transmitter = "T2", power_dbm = 4.0 }]
"#;

#[test]
fn a_power_option_predicts_as_the_edited_site() {
    let text = format!("{HEAD}{POWERS}");
    let a = assess(&text);
    let site_only = &text[..text.find("[[what_if]]").unwrap()];
    for (id, from, to) in [
        (
            "raise-t1",
            "position = [5, 10]\npower_dbm = 10.0",
            "position = [5, 10]\npower_dbm = 16.0",
        ),
        (
            "lower-t2",
            "position = [25, 10]\npower_dbm = 10.0",
            "position = [25, 10]\npower_dbm = 4.0",
        ),
    ] {
        let opt = option(&a, id);
        let edited = site_only.replacen(from, to, 1);
        assert_ne!(edited, site_only, "{id}: the edit applies");
        let b = assess(&edited);
        assert_eq!(opt.after.as_ref().unwrap().services, b.services, "{id}");
        let graded: Vec<_> = b
            .layers
            .iter()
            .filter(|l| l.model == b.services[0].model)
            .collect();
        assert_eq!(graded.len(), opt.after_layers.len(), "{id}");
        for (x, y) in graded.iter().zip(&opt.after_layers) {
            assert_eq!(x.servers, y.servers, "{id}");
            assert_eq!(x.best_server, y.best_server, "{id}");
            assert!(
                x.level_dbm
                    .iter()
                    .zip(&y.level_dbm)
                    .all(|(p, q)| p.to_bits() == q.to_bits()),
                "{id}: levels bit-equal"
            );
        }
    }
}
