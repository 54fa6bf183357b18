//! Passive distribution budget: the coax network that feeds a set of new indoor antennas
//! from one head end, the head-end power it needs per channel and composite, and its bill
//! of quantities.
//!
//! # Topology
//!
//! The network is a star of stars:
//!
//! 1. **Head-end splitter.** The head-end port feeds one splitter with one output per
//!    floor that has antennas (`N_floors` ways). With antennas on one floor only there is
//!    no head-end splitter (0 dB).
//! 2. **Riser.** Each output runs up (or down) the riser to its floor, landing at the
//!    head end's (x, y) on that floor. Its length is `|Δelevation| + riser_allowance_m`.
//!    On the head end's own floor (the floor whose name equals [`HeadEnd::floor`]) there
//!    is no riser cable: `riser_m = 0`.
//! 3. **Floor splitter.** At the riser landing a splitter has one output per antenna on
//!    that floor; with one antenna there is none (0 dB).
//! 4. **Horizontal run.** Each antenna is fed by its own run, routed rectilinearly:
//!    `(|dx| + |dy|) · (1 + slack_fraction)` from the landing.
//!
//! A splitter of N ways loses `10·log10(N)` (the ideal split) plus the excess of the
//! smallest tabulated splitter with at least N ways ([`splitter_loss_db`]). A split larger
//! than the table is an error, not a cascade: add a row to `splitter_excess_db` (a real
//! cascade adds its own excess and connectors, which the table should then state).
//!
//! # Connectors counted
//!
//! Every cable segment (the riser of a floor other than the head end's, and each
//! horizontal run) carries `connectors_per_run` mated connector pairs, each losing
//! `connector_pair_loss_db`; with the usual 2 these are the pair at each end of the run.
//! Not counted: the head-end port mated straight to the head-end splitter, the head-end
//! splitter mated straight to the floor splitter on the head end's floor, and anything
//! inside the antenna. An antenna's [`Feed`] counts the pairs on its own path: those of its
//! floor's riser (if any) and of its horizontal run.
//!
//! Each [`Feed`] is the loss from the head-end port to that antenna's port: the whole
//! loss of its floor's riser (the riser is in series with every antenna on the floor),
//! its horizontal run, the floor and head-end splitters and its connectors.

use serde::{Deserialize, Serialize};
use std::collections::BTreeMap;
use std::fmt;

/// The built-in table, `plugins/data/cables.toml`.
const BUILTIN: &str = include_str!("../../../plugins/data/cables.toml");
/// Antennas whose floors share a name must agree on its elevation to within this, in m.
const SAME_ELEVATION_M: f64 = 1e-6;
/// Cable lengths are rounded up to the metre after forgiving this much floating error.
const ROUND_TOLERANCE_M: f64 = 1e-9;
/// The cable classes a table may use.
const CLASSES: [&str; 2] = ["feeder", "jumper"];

/// What went wrong in a distribution budget, said so that the user can fix it.
#[derive(Debug, Clone, PartialEq)]
pub enum DistError {
    /// The cable table is not valid TOML, or a key is missing or unknown.
    Parse(String),
    /// The cable table parses but a value in it is unusable.
    BadTable {
        /// The entry or key at fault.
        what: String,
        /// What is wrong with it and how to fix it.
        problem: String,
    },
    /// No cable has this id.
    UnknownCable {
        /// The id asked for.
        id: String,
        /// The ids the library has.
        known: Vec<String>,
    },
    /// The frequency is outside the span a cable's loss is tabulated over.
    OutOfRange {
        /// The cable id.
        cable: String,
        /// The frequency asked for, MHz.
        freq_mhz: f64,
        /// The lowest tabulated frequency, MHz.
        min_mhz: f64,
        /// The highest tabulated frequency, MHz.
        max_mhz: f64,
    },
    /// A splitter needs more ways than the splitter table holds.
    SplitterTooLarge {
        /// The ways needed.
        ways: u32,
        /// The largest splitter in the table.
        max_ways: u32,
    },
    /// An input (coordinates, floors, channels, powers) is unusable.
    BadInput {
        /// The input at fault.
        what: String,
        /// What is wrong with it and how to fix it.
        problem: String,
    },
}

impl fmt::Display for DistError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            DistError::Parse(msg) => write!(
                f,
                "cable table: {msg}; each [[cables]] entry needs id, name, class, \
                 loss_db_per_100m and source, and [components] needs every key of the built-in table"
            ),
            DistError::BadTable { what, problem } => write!(f, "cable table, {what}: {problem}"),
            DistError::UnknownCable { id, known } => write!(
                f,
                "unknown cable id \"{id}\"; known ids: {}; use one of them or add a [[cables]] entry",
                known.join(", ")
            ),
            DistError::OutOfRange { cable, freq_mhz, min_mhz, max_mhz } => write!(
                f,
                "cable \"{cable}\" is tabulated from {min_mhz} to {max_mhz} MHz, not at {freq_mhz} MHz; \
                 choose a cable tabulated there or extend its loss_db_per_100m from a datasheet"
            ),
            DistError::SplitterTooLarge { ways, max_ways } => write!(
                f,
                "a {ways}-way splitter is beyond the splitter table (largest {max_ways} ways); \
                 add a row to splitter_excess_db or put fewer antennas on one floor"
            ),
            DistError::BadInput { what, problem } => write!(f, "{what}: {problem}"),
        }
    }
}

impl std::error::Error for DistError {}

/// A [`DistError::BadTable`].
fn bad_table(what: impl Into<String>, problem: impl Into<String>) -> DistError {
    DistError::BadTable {
        what: what.into(),
        problem: problem.into(),
    }
}

/// A [`DistError::BadInput`].
fn bad_input(what: impl Into<String>, problem: impl Into<String>) -> DistError {
    DistError::BadInput {
        what: what.into(),
        problem: problem.into(),
    }
}

/// One cable size: its attenuation against frequency.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Cable {
    /// Generic id, e.g. `coax-half-inch-foam`.
    pub id: String,
    /// Descriptive name for reports.
    pub name: String,
    /// `feeder` or `jumper`.
    pub class: String,
    /// Matched attenuation as `(MHz, dB per 100 m)`, frequencies strictly ascending.
    pub loss_db_per_100m: Vec<(f64, f64)>,
    /// Where the numbers come from.
    pub source: String,
}

impl Cable {
    /// Attenuation in dB per 100 m at `freq_mhz`, interpolated log-log (straight line in
    /// log loss against log frequency) between table points. A frequency outside the
    /// table is an error naming the tabulated span.
    pub fn loss_db_per_100m_at(&self, freq_mhz: f64) -> Result<f64, DistError> {
        validate_cable(self)?;
        if !(freq_mhz.is_finite() && freq_mhz > 0.0) {
            return Err(bad_input(
                "frequency",
                format!("{freq_mhz} MHz; give a positive frequency in MHz"),
            ));
        }
        let exact = self.loss_db_per_100m.iter().find(|(f, _)| *f == freq_mhz);
        if let Some((_, loss)) = exact {
            return Ok(*loss);
        }
        let segment = self
            .loss_db_per_100m
            .windows(2)
            .find(|w| w[0].0 <= freq_mhz && freq_mhz <= w[1].0);
        match segment {
            Some(w) => Ok(log_log(w[0], w[1], freq_mhz)),
            None => Err(self.out_of_range(freq_mhz)),
        }
    }

    /// The out-of-range error for `freq_mhz`.
    fn out_of_range(&self, freq_mhz: f64) -> DistError {
        let first = self.loss_db_per_100m.first().map_or(f64::NAN, |p| p.0);
        let last = self.loss_db_per_100m.last().map_or(f64::NAN, |p| p.0);
        DistError::OutOfRange {
            cable: self.id.clone(),
            freq_mhz,
            min_mhz: first,
            max_mhz: last,
        }
    }
}

/// Log-log interpolation at `f` between `(f1, l1)` and `(f2, l2)` (all positive).
fn log_log((f1, l1): (f64, f64), (f2, l2): (f64, f64), f: f64) -> f64 {
    let t = (f / f1).ln() / (f2 / f1).ln();
    (l1.ln() + t * (l2 / l1).ln()).exp()
}

/// The passive parts other than cable.
#[derive(Debug, Clone, PartialEq)]
pub struct Components {
    /// Splitter excess loss over the ideal split, `(ways, dB)`, ways ascending and ≥ 2.
    pub splitter_excess_db: Vec<(u32, f64)>,
    /// Loss of one mated connector pair, dB.
    pub connector_pair_loss_db: f64,
    /// Mated connector pairs per cable segment.
    pub connectors_per_run: u32,
    /// Extra horizontal cable for routing, as a fraction of the rectilinear length.
    pub slack_fraction: f64,
    /// Extra riser cable per floor run, m.
    pub riser_allowance_m: f64,
}

/// The cables and components a budget draws on.
#[derive(Debug, Clone, PartialEq)]
pub struct CableLibrary {
    /// The cables, ids unique.
    pub cables: Vec<Cable>,
    /// The other passive parts.
    pub components: Components,
}

/// The file form of the library: components with their source strings.
#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct RawLibrary {
    cables: Vec<Cable>,
    components: RawComponents,
}

/// The file form of `[components]`.
#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct RawComponents {
    splitter_excess_db: Vec<(u32, f64)>,
    splitter_excess_source: String,
    connector_pair_loss_db: f64,
    connector_pair_loss_source: String,
    connectors_per_run: u32,
    connectors_per_run_source: String,
    slack_fraction: f64,
    slack_fraction_source: String,
    riser_allowance_m: f64,
    riser_allowance_source: String,
}

impl RawComponents {
    /// Every source string must say something.
    fn check_sources(&self) -> Result<(), DistError> {
        let sources = [
            ("splitter_excess_source", &self.splitter_excess_source),
            (
                "connector_pair_loss_source",
                &self.connector_pair_loss_source,
            ),
            ("connectors_per_run_source", &self.connectors_per_run_source),
            ("slack_fraction_source", &self.slack_fraction_source),
            ("riser_allowance_source", &self.riser_allowance_source),
        ];
        match sources.iter().find(|(_, s)| s.trim().is_empty()) {
            Some((key, _)) => Err(bad_table(
                format!("[components] {key}"),
                "is empty; say where the number comes from",
            )),
            None => Ok(()),
        }
    }

    /// The components without their sources.
    fn into_components(self) -> Components {
        Components {
            splitter_excess_db: self.splitter_excess_db,
            connector_pair_loss_db: self.connector_pair_loss_db,
            connectors_per_run: self.connectors_per_run,
            slack_fraction: self.slack_fraction,
            riser_allowance_m: self.riser_allowance_m,
        }
    }
}

impl CableLibrary {
    /// The built-in table, `plugins/data/cables.toml`.
    pub fn builtin() -> Result<Self, DistError> {
        Self::parse(BUILTIN)
    }

    /// Parse and check a table in the form of `plugins/data/cables.toml`.
    pub fn parse(text: &str) -> Result<Self, DistError> {
        let raw: RawLibrary =
            toml::from_str(text).map_err(|e| DistError::Parse(e.to_string().trim().to_string()))?;
        if raw.cables.is_empty() {
            return Err(bad_table(
                "[[cables]]",
                "no cables; add at least one [[cables]] entry",
            ));
        }
        for (i, cable) in raw.cables.iter().enumerate() {
            validate_cable(cable)?;
            if raw.cables[..i].iter().any(|c| c.id == cable.id) {
                return Err(bad_table(
                    format!("cable \"{}\"", cable.id),
                    "id used twice; give each entry its own id",
                ));
            }
        }
        raw.components.check_sources()?;
        let components = raw.components.into_components();
        validate_components(&components)?;
        Ok(CableLibrary {
            cables: raw.cables,
            components,
        })
    }

    /// The cable with this id; an unknown id is an error listing the known ones.
    pub fn cable(&self, id: &str) -> Result<&Cable, DistError> {
        self.cables
            .iter()
            .find(|c| c.id == id)
            .ok_or_else(|| DistError::UnknownCable {
                id: id.to_string(),
                known: self.cables.iter().map(|c| c.id.clone()).collect(),
            })
    }
}

/// Check one cable entry: id, class, source and loss table.
fn validate_cable(cable: &Cable) -> Result<(), DistError> {
    let what = format!("cable \"{}\"", cable.id);
    if cable.id.trim().is_empty() {
        return Err(bad_table(
            "cable",
            "empty id; give every [[cables]] entry an id",
        ));
    }
    if !CLASSES.contains(&cable.class.as_str()) {
        return Err(bad_table(
            &what,
            format!(
                "class \"{}\"; use one of {}",
                cable.class,
                CLASSES.join(", ")
            ),
        ));
    }
    if cable.source.trim().is_empty() {
        return Err(bad_table(
            &what,
            "empty source; say where the losses come from",
        ));
    }
    validate_loss_table(&what, &cable.loss_db_per_100m)
}

/// Check a `(MHz, dB/100 m)` table: ≥ 2 points, positive finite values, ascending frequency.
fn validate_loss_table(what: &str, table: &[(f64, f64)]) -> Result<(), DistError> {
    if table.len() < 2 {
        return Err(bad_table(
            what,
            "loss_db_per_100m needs at least two [MHz, dB] points",
        ));
    }
    for &(f, loss) in table {
        if !(f.is_finite() && f > 0.0 && loss.is_finite() && loss > 0.0) {
            return Err(bad_table(
                what,
                format!("point [{f}, {loss}]: frequency and loss must be positive numbers"),
            ));
        }
    }
    match table.windows(2).find(|w| w[1].0 <= w[0].0) {
        Some(w) => Err(bad_table(
            what,
            format!(
                "frequencies {} then {} MHz: list the points in strictly ascending frequency",
                w[0].0, w[1].0
            ),
        )),
        None => Ok(()),
    }
}

/// Check the components: splitter table, connector loss, slack and allowance.
fn validate_components(c: &Components) -> Result<(), DistError> {
    validate_splitter_table(&c.splitter_excess_db)?;
    check_range(
        "connector_pair_loss_db",
        c.connector_pair_loss_db,
        0.0,
        10.0,
    )?;
    check_range("slack_fraction", c.slack_fraction, 0.0, 1.0)?;
    check_range("riser_allowance_m", c.riser_allowance_m, 0.0, 1000.0)
}

/// A component value must be finite and within `[lo, hi]`.
fn check_range(key: &str, value: f64, lo: f64, hi: f64) -> Result<(), DistError> {
    if value.is_finite() && (lo..=hi).contains(&value) {
        Ok(())
    } else {
        Err(bad_table(
            format!("[components] {key}"),
            format!("{value}; give a number from {lo} to {hi}"),
        ))
    }
}

/// The splitter table: non-empty, ways ≥ 2 strictly ascending, excess finite and ≥ 0.
fn validate_splitter_table(table: &[(u32, f64)]) -> Result<(), DistError> {
    let what = "[components] splitter_excess_db";
    if table.is_empty() {
        return Err(bad_table(
            what,
            "is empty; list [ways, excess dB] for each splitter size",
        ));
    }
    if let Some((w, e)) = table
        .iter()
        .find(|(w, e)| *w < 2 || !(e.is_finite() && *e >= 0.0))
    {
        return Err(bad_table(
            what,
            format!("[{w}, {e}]: ways must be 2 or more and excess a dB value ≥ 0"),
        ));
    }
    match table.windows(2).find(|p| p[1].0 <= p[0].0) {
        Some(p) => Err(bad_table(
            what,
            format!(
                "ways {} then {}: list sizes in ascending ways",
                p[0].0, p[1].0
            ),
        )),
        None => Ok(()),
    }
}

/// Loss of an N-way splitter, dB: the ideal split `10·log10(N)` plus the excess of the
/// smallest tabulated splitter with at least N ways. N = 1 is no splitter (0 dB); N = 0
/// and N beyond the table are errors (no cascade is assumed).
pub fn splitter_loss_db(ways: u32, c: &Components) -> Result<f64, DistError> {
    validate_splitter_table(&c.splitter_excess_db)?;
    match ways {
        0 => Err(bad_input(
            "splitter",
            "0 ways; a splitter feeds at least one output",
        )),
        1 => Ok(0.0),
        n => {
            let excess = c
                .splitter_excess_db
                .iter()
                .filter(|(w, _)| *w >= n)
                .min_by_key(|(w, _)| *w);
            let max_ways = c
                .splitter_excess_db
                .iter()
                .map(|(w, _)| *w)
                .max()
                .unwrap_or(0);
            match excess {
                Some((_, e)) => Ok(10.0 * f64::from(n).log10() + e),
                None => Err(DistError::SplitterTooLarge { ways: n, max_ways }),
            }
        }
    }
}

/// Where the head end stands.
#[derive(Debug, Clone, PartialEq)]
pub struct HeadEnd {
    /// Elevation of its floor, m.
    pub floor_elevation_m: f64,
    /// Plan position, m.
    pub x_m: f64,
    /// Plan position, m.
    pub y_m: f64,
    /// Name of its floor.
    pub floor: String,
}

/// One antenna to feed.
#[derive(Debug, Clone, PartialEq)]
pub struct AntennaPoint {
    /// Antenna id, unique in the set.
    pub id: String,
    /// Name of its floor.
    pub floor: String,
    /// Elevation of its floor, m (the same for every antenna on the floor).
    pub floor_elevation_m: f64,
    /// Plan position, m.
    pub x_m: f64,
    /// Plan position, m.
    pub y_m: f64,
}

/// The path from the head-end port to one antenna's port and its loss.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Feed {
    /// Antenna id.
    pub antenna: String,
    /// Antenna's floor.
    pub floor: String,
    /// Horizontal run from the riser landing, slack included, m.
    pub horizontal_m: f64,
    /// Riser cable of the antenna's floor (0 on the head end's floor), m.
    pub riser_m: f64,
    /// Cable on the path, riser plus horizontal, m.
    pub cable_m: f64,
    /// Cable loss on the path, dB.
    pub cable_db: f64,
    /// Head-end plus floor splitter loss, dB.
    pub splitter_db: f64,
    /// Mated connector pairs on the path.
    pub connectors: u32,
    /// Connector loss on the path, dB.
    pub connector_db: f64,
    /// Total loss, head-end port to antenna port, dB.
    pub total_db: f64,
}

/// One floor of the star.
struct FloorInfo {
    name: String,
    elevation_m: f64,
    antennas: u32,
    riser_m: f64,
    split_db: f64,
}

/// Per-metre cable losses and the head-end splitter loss at the design frequency.
struct PathLosses {
    horizontal_db_per_m: f64,
    riser_db_per_m: f64,
    head_split_db: f64,
}

/// The feed of every antenna (in input order) at `freq_mhz`, for the star topology of the
/// module documentation. No antennas give no feeds.
pub fn feeds(
    head: &HeadEnd,
    antennas: &[AntennaPoint],
    horizontal: &Cable,
    riser: &Cable,
    freq_mhz: f64,
    c: &Components,
) -> Result<Vec<Feed>, DistError> {
    validate_components(c)?;
    validate_head(head)?;
    validate_antennas(antennas)?;
    if antennas.is_empty() {
        return Ok(Vec::new());
    }
    let floors = floor_plan(head, antennas, c)?;
    let floor_count =
        u32::try_from(floors.len()).map_err(|_| bad_input("floors", "too many floors"))?;
    let losses = PathLosses {
        horizontal_db_per_m: horizontal.loss_db_per_100m_at(freq_mhz)? / 100.0,
        riser_db_per_m: riser.loss_db_per_100m_at(freq_mhz)? / 100.0,
        head_split_db: splitter_loss_db(floor_count, c)?,
    };
    antennas
        .iter()
        .map(|a| feed_for(a, head, &floors, &losses, c))
        .collect()
}

/// The head end's position must be finite and its floor named.
fn validate_head(head: &HeadEnd) -> Result<(), DistError> {
    if !(head.x_m.is_finite() && head.y_m.is_finite() && head.floor_elevation_m.is_finite()) {
        return Err(bad_input(
            "head end",
            "position or floor elevation is not a finite number; give metres",
        ));
    }
    if head.floor.trim().is_empty() {
        return Err(bad_input(
            "head end",
            "floor name is empty; name the floor it stands on",
        ));
    }
    Ok(())
}

/// Antennas need unique non-empty ids, named floors and finite positions.
fn validate_antennas(antennas: &[AntennaPoint]) -> Result<(), DistError> {
    for (i, a) in antennas.iter().enumerate() {
        let what = format!("antenna \"{}\"", a.id);
        if a.id.trim().is_empty() || a.floor.trim().is_empty() {
            return Err(bad_input(&what, "id or floor name is empty; give both"));
        }
        if !(a.x_m.is_finite() && a.y_m.is_finite() && a.floor_elevation_m.is_finite()) {
            return Err(bad_input(
                &what,
                "position or floor elevation is not a finite number; give metres",
            ));
        }
        if antennas[..i].iter().any(|b| b.id == a.id) {
            return Err(bad_input(
                &what,
                "id used twice; give each antenna its own id",
            ));
        }
    }
    Ok(())
}

/// The floors with antennas, in order of first appearance, with riser and floor splitter.
fn floor_plan(
    head: &HeadEnd,
    antennas: &[AntennaPoint],
    c: &Components,
) -> Result<Vec<FloorInfo>, DistError> {
    let mut floors = group_floors(head, antennas)?;
    for floor in &mut floors {
        floor.riser_m = if floor.name == head.floor {
            0.0
        } else {
            (floor.elevation_m - head.floor_elevation_m).abs() + c.riser_allowance_m
        };
        floor.split_db = splitter_loss_db(floor.antennas, c)?;
    }
    Ok(floors)
}

/// Group antennas by floor name, checking that each floor has one elevation.
fn group_floors(head: &HeadEnd, antennas: &[AntennaPoint]) -> Result<Vec<FloorInfo>, DistError> {
    let mut floors: Vec<FloorInfo> = Vec::new();
    for a in antennas {
        let known = if a.floor == head.floor {
            Some(head.floor_elevation_m)
        } else {
            None
        };
        let known = floors
            .iter()
            .find(|f| f.name == a.floor)
            .map(|f| f.elevation_m)
            .or(known);
        if known.is_some_and(|e| (e - a.floor_elevation_m).abs() > SAME_ELEVATION_M) {
            return Err(bad_input(
                format!("antenna \"{}\"", a.id),
                format!(
                    "floor \"{}\" is given two elevations; use one elevation per floor name",
                    a.floor
                ),
            ));
        }
        match floors.iter_mut().find(|f| f.name == a.floor) {
            Some(f) => f.antennas = f.antennas.saturating_add(1),
            None => floors.push(FloorInfo {
                name: a.floor.clone(),
                elevation_m: a.floor_elevation_m,
                antennas: 1,
                riser_m: 0.0,
                split_db: 0.0,
            }),
        }
    }
    Ok(floors)
}

/// Mated connector pairs on a path: `connectors_per_run` for the horizontal run, and as
/// many again for the floor's riser if it has one.
fn connector_pairs(floor: &FloorInfo, c: &Components) -> Result<u32, DistError> {
    let segments: u32 = if floor.riser_m > 0.0 { 2 } else { 1 };
    segments.checked_mul(c.connectors_per_run).ok_or_else(|| {
        bad_table(
            "[components] connectors_per_run",
            "too large; give the pairs on one run",
        )
    })
}

/// The feed of one antenna.
fn feed_for(
    a: &AntennaPoint,
    head: &HeadEnd,
    floors: &[FloorInfo],
    losses: &PathLosses,
    c: &Components,
) -> Result<Feed, DistError> {
    let floor = floors.iter().find(|f| f.name == a.floor).ok_or_else(|| {
        bad_input(
            format!("antenna \"{}\"", a.id),
            "its floor is missing from the plan",
        )
    })?;
    let horizontal_m =
        ((a.x_m - head.x_m).abs() + (a.y_m - head.y_m).abs()) * (1.0 + c.slack_fraction);
    let connectors = connector_pairs(floor, c)?;
    let cable_db =
        floor.riser_m * losses.riser_db_per_m + horizontal_m * losses.horizontal_db_per_m;
    let splitter_db = losses.head_split_db + floor.split_db;
    let connector_db = f64::from(connectors) * c.connector_pair_loss_db;
    let total_db = cable_db + splitter_db + connector_db;
    if !total_db.is_finite() {
        return Err(bad_input(
            format!("antenna \"{}\"", a.id),
            "too far from the head end to budget; check the units",
        ));
    }
    Ok(Feed {
        antenna: a.id.clone(),
        floor: a.floor.clone(),
        horizontal_m,
        riser_m: floor.riser_m,
        cable_m: floor.riser_m + horizontal_m,
        cable_db,
        splitter_db,
        connectors,
        connector_db,
        total_db,
    })
}

/// The inputs of [`head_end_power`]: at least one channel and one finite feed, finite
/// powers, back-off of 0 dB or more.
fn check_power_inputs(
    feeds: &[Feed],
    port_dbm_per_channel: f64,
    channels: u32,
    max_composite_dbm: f64,
    back_off_db: f64,
) -> Result<(), DistError> {
    if channels == 0 {
        return Err(bad_input(
            "channels",
            "0; give the number of channels carried (at least 1)",
        ));
    }
    if feeds.is_empty() || feeds.iter().any(|f| !f.total_db.is_finite()) {
        return Err(bad_input(
            "feeds",
            "none, or a loss that is not a number; budget at least one antenna",
        ));
    }
    if !(port_dbm_per_channel.is_finite() && max_composite_dbm.is_finite()) {
        return Err(bad_input(
            "head-end power",
            "port level or rated composite is not a number; give dBm",
        ));
    }
    if !(back_off_db.is_finite() && back_off_db >= 0.0) {
        return Err(bad_input(
            "back-off",
            format!("{back_off_db} dB; give 0 dB or more"),
        ));
    }
    Ok(())
}

/// The power the head end must deliver and whether the equipment can.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct HeadEndPower {
    /// Channels carried.
    pub channels: u32,
    /// Power per channel at the head-end port, dBm.
    pub per_channel_dbm: f64,
    /// Composite power of all channels at the head-end port, dBm.
    pub composite_dbm: f64,
    /// Back-off from the rated composite, dB.
    pub back_off_db: f64,
    /// Rated composite power of the equipment, dBm (before back-off).
    pub max_composite_dbm: f64,
    /// Allowed composite (rated − back-off) minus the composite needed, dB.
    pub margin_db: f64,
    /// True when the margin is negative.
    pub exceeded: bool,
}

/// The head-end power that delivers at least `port_dbm_per_channel` at every antenna port:
/// per channel = port + the largest feed loss; composite = per channel + 10·log10(channels)
/// (equal-power channels); margin = (max_composite − back_off) − composite.
pub fn head_end_power(
    feeds: &[Feed],
    port_dbm_per_channel: f64,
    channels: u32,
    max_composite_dbm: f64,
    back_off_db: f64,
) -> Result<HeadEndPower, DistError> {
    check_power_inputs(
        feeds,
        port_dbm_per_channel,
        channels,
        max_composite_dbm,
        back_off_db,
    )?;
    let worst_db = feeds
        .iter()
        .map(|f| f.total_db)
        .fold(f64::NEG_INFINITY, f64::max);
    let per_channel_dbm = port_dbm_per_channel + worst_db;
    let composite_dbm = per_channel_dbm + 10.0 * f64::from(channels).log10();
    let margin_db = (max_composite_dbm - back_off_db) - composite_dbm;
    Ok(HeadEndPower {
        channels,
        per_channel_dbm,
        composite_dbm,
        back_off_db,
        max_composite_dbm,
        margin_db,
        exceeded: margin_db < 0.0,
    })
}

/// One line of the bill of quantities.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct QuantityLine {
    /// What to supply.
    pub item: String,
    /// `each` or `m`.
    pub unit: String,
    /// How many.
    pub quantity: f64,
    /// How the quantity was reached.
    pub note: String,
}

/// A line of the bill.
fn line(item: String, unit: &str, quantity: f64, note: String) -> QuantityLine {
    QuantityLine {
        item,
        unit: unit.to_string(),
        quantity,
        note,
    }
}

/// The bill of quantities for `feeds` (as [`feeds`] made them with these cables and
/// components): antennas, splitters by ways, cable metres by type (rounded up to the
/// metre), cable connectors by type, head-end units. Lines with nothing to supply are
/// left out, except the antennas and head-end units.
pub fn bill_of_quantities(
    feeds: &[Feed],
    horizontal: &Cable,
    riser: &Cable,
    c: &Components,
    head_end_units: u32,
    antenna_name: &str,
) -> Vec<QuantityLine> {
    let floors = floors_of(feeds);
    let mut lines = vec![line(
        format!("antenna: {antenna_name}"),
        "each",
        feeds.len() as f64,
        "one per feed".to_string(),
    )];
    lines.extend(splitter_lines(&floors));
    lines.extend(cable_lines(feeds, &floors, horizontal, riser, c));
    lines.extend(connector_lines(feeds.len(), &floors, horizontal, riser, c));
    lines.push(line(
        "head-end unit".to_string(),
        "each",
        f64::from(head_end_units),
        "as given".to_string(),
    ));
    lines
}

/// Per floor in order of first appearance: antennas on it and its riser length.
fn floors_of(feeds: &[Feed]) -> Vec<(&str, usize, f64)> {
    let mut floors: Vec<(&str, usize, f64)> = Vec::new();
    for f in feeds {
        match floors.iter_mut().find(|(name, _, _)| *name == f.floor) {
            Some(entry) => entry.1 += 1,
            None => floors.push((&f.floor, 1, f.riser_m)),
        }
    }
    floors
}

/// Splitters by ways: the head-end splitter across floors, one per floor with 2+ antennas.
fn splitter_lines(floors: &[(&str, usize, f64)]) -> Vec<QuantityLine> {
    let mut by_ways: BTreeMap<usize, usize> = BTreeMap::new();
    if floors.len() > 1 {
        *by_ways.entry(floors.len()).or_default() += 1;
    }
    for (_, antennas, _) in floors.iter().filter(|f| f.1 > 1) {
        *by_ways.entry(*antennas).or_default() += 1;
    }
    by_ways
        .into_iter()
        .map(|(ways, count)| {
            let note =
                "head-end splitter across floors and floor splitters across antennas".to_string();
            line(format!("splitter, {ways}-way"), "each", count as f64, note)
        })
        .collect()
}

/// Metres rounded up to the whole metre, forgiving floating error.
fn ceil_m(metres: f64) -> f64 {
    (metres - ROUND_TOLERANCE_M).ceil().max(0.0)
}

/// Add `amount` of `cable` to `totals`, merging with an earlier entry of the same id.
fn add_by_cable<'a>(totals: &mut Vec<(&'a Cable, f64)>, cable: &'a Cable, amount: f64) {
    match totals.iter_mut().find(|(c, _)| c.id == cable.id) {
        Some(entry) => entry.1 += amount,
        None => totals.push((cable, amount)),
    }
}

/// Cable metres by type: horizontal runs (slack included) and risers (allowance included).
fn cable_lines(
    feeds: &[Feed],
    floors: &[(&str, usize, f64)],
    horizontal: &Cable,
    riser: &Cable,
    c: &Components,
) -> Vec<QuantityLine> {
    let mut totals = Vec::new();
    add_by_cable(
        &mut totals,
        horizontal,
        feeds.iter().map(|f| f.horizontal_m).sum(),
    );
    add_by_cable(&mut totals, riser, floors.iter().map(|f| f.2).sum());
    let note = format!(
        "horizontal runs include {}% routing slack, each riser {} m allowance; rounded up to the metre",
        c.slack_fraction * 100.0,
        c.riser_allowance_m
    );
    totals
        .into_iter()
        .filter(|(_, m)| *m > 0.0)
        .map(|(cable, m)| {
            line(
                format!("cable: {} ({})", cable.name, cable.id),
                "m",
                ceil_m(m),
                note.clone(),
            )
        })
        .collect()
}

/// Cable-mounted connectors by cable type: `connectors_per_run` per cable segment.
fn connector_lines(
    horizontal_runs: usize,
    floors: &[(&str, usize, f64)],
    horizontal: &Cable,
    riser: &Cable,
    c: &Components,
) -> Vec<QuantityLine> {
    let per_run = f64::from(c.connectors_per_run);
    let risers = floors.iter().filter(|f| f.2 > 0.0).count();
    let mut totals = Vec::new();
    add_by_cable(&mut totals, horizontal, horizontal_runs as f64 * per_run);
    add_by_cable(&mut totals, riser, risers as f64 * per_run);
    let note = format!(
        "{} per cable run (one per mated pair)",
        c.connectors_per_run
    );
    totals
        .into_iter()
        .filter(|(_, n)| *n > 0.0)
        .map(|(cable, n)| {
            line(
                format!("connector for {} ({})", cable.name, cable.id),
                "each",
                n,
                note.clone(),
            )
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;

    /// A test table: cables of flat loss (10 and 5 dB/100 m) and the built-in components.
    const TEST_TABLE: &str = r#"
[[cables]]
id = "flat-10"
name = "test cable, 10 dB per 100 m"
class = "feeder"
source = "test value"
loss_db_per_100m = [[100, 10.0], [10000, 10.0]]

[[cables]]
id = "flat-5"
name = "test cable, 5 dB per 100 m"
class = "feeder"
source = "test value"
loss_db_per_100m = [[100, 5.0], [10000, 5.0]]

[[cables]]
id = "two-point"
name = "test cable, 10 dB at 100 MHz and 20 dB at 400 MHz"
class = "jumper"
source = "test value"
loss_db_per_100m = [[100, 10.0], [400, 20.0]]

[components]
splitter_excess_db = [[2, 0.3], [3, 0.5], [4, 0.6], [6, 0.8], [8, 1.0]]
splitter_excess_source = "test value"
connector_pair_loss_db = 0.1
connector_pair_loss_source = "test value"
connectors_per_run = 2
connectors_per_run_source = "test value"
slack_fraction = 0.10
slack_fraction_source = "test value"
riser_allowance_m = 3.0
riser_allowance_source = "test value"
"#;

    fn lib() -> CableLibrary {
        CableLibrary::parse(TEST_TABLE).unwrap()
    }

    fn head() -> HeadEnd {
        HeadEnd {
            floor_elevation_m: 0.0,
            x_m: 0.0,
            y_m: 0.0,
            floor: "L0".into(),
        }
    }

    fn ant(id: &str, floor: &str, elev: f64, x: f64, y: f64) -> AntennaPoint {
        AntennaPoint {
            id: id.into(),
            floor: floor.into(),
            floor_elevation_m: elev,
            x_m: x,
            y_m: y,
        }
    }

    /// Head end on L0 at (0, 0); A and B on L1 (4 m) at (10, 0) and (0, 20); C on L0 at (5, 5).
    fn chain() -> Vec<AntennaPoint> {
        vec![
            ant("A", "L1", 4.0, 10.0, 0.0),
            ant("B", "L1", 4.0, 0.0, 20.0),
            ant("C", "L0", 0.0, 5.0, 5.0),
        ]
    }

    fn close(a: f64, b: f64, tol: f64) -> bool {
        (a - b).abs() <= tol
    }

    // Source: hand calculation. Cable 10 dB/100 m = 0.1 dB/m for riser and horizontal;
    // splitter excess 2-way 0.3 dB; connector pair 0.1 dB, 2 pairs per run; slack 10 %;
    // riser allowance 3 m.
    //   Head-end splitter: 2 floors (L0, L1) -> 10 log10 2 + 0.3 = 3.0103 + 0.3 = 3.3103 dB.
    //   L1 riser: |4 - 0| + 3 = 7 m -> 7 x 0.1 = 0.7 dB; floor splitter 2 ways -> 3.3103 dB.
    //   A: horizontal (10 + 0) x 1.1 = 11 m -> 1.1 dB; connectors 2 runs x 2 = 4 pairs -> 0.4 dB;
    //      total 3.3103 + 0.7 + 3.3103 + 1.1 + 0.4 = 8.8206 dB.
    //   B: horizontal (0 + 20) x 1.1 = 22 m -> 2.2 dB; total 3.3103 + 0.7 + 3.3103 + 2.2 + 0.4 = 9.9206 dB.
    //   C: L0 is the head end's floor: no riser, one antenna so no floor splitter;
    //      horizontal (5 + 5) x 1.1 = 11 m -> 1.1 dB; 1 run x 2 = 2 pairs -> 0.2 dB;
    //      total 3.3103 + 1.1 + 0.2 = 4.6103 dB.
    #[test]
    fn hand_calculated_chain() {
        let lib = lib();
        let cable = lib.cable("flat-10").unwrap();
        let f = feeds(&head(), &chain(), cable, cable, 900.0, &lib.components).unwrap();
        assert_eq!(f.len(), 3);
        let expect = [
            ("A", 11.0, 7.0, 4, 8.8206),
            ("B", 22.0, 7.0, 4, 9.9206),
            ("C", 11.0, 0.0, 2, 4.6103),
        ];
        for (feed, (id, h, r, n, total)) in f.iter().zip(expect) {
            assert_eq!(feed.antenna, id);
            assert!(
                close(feed.horizontal_m, h, 1e-9),
                "{id} horizontal {}",
                feed.horizontal_m
            );
            assert!(close(feed.riser_m, r, 1e-9), "{id} riser {}", feed.riser_m);
            assert_eq!(feed.connectors, n, "{id} connectors");
            assert!(
                close(feed.total_db, total, 0.01),
                "{id} total {}",
                feed.total_db
            );
            let parts = feed.cable_db + feed.splitter_db + feed.connector_db;
            assert!(
                close(feed.total_db, parts, 1e-9),
                "{id} total is the sum of its parts"
            );
        }
    }

    // Source: hand calculation. As the chain above but the riser is 5 dB/100 m:
    // L1 riser 7 m x 0.05 dB/m = 0.35 dB instead of 0.7 dB, so
    // A = 3.3103 + 0.35 + 3.3103 + 1.1 + 0.4 = 8.4706 dB; C (no riser) stays 4.6103 dB.
    #[test]
    fn riser_uses_the_riser_cable() {
        let lib = lib();
        let (h, r) = (lib.cable("flat-10").unwrap(), lib.cable("flat-5").unwrap());
        let f = feeds(&head(), &chain(), h, r, 900.0, &lib.components).unwrap();
        assert!(close(f[0].total_db, 8.4706, 0.01), "A {}", f[0].total_db);
        assert!(close(f[2].total_db, 4.6103, 0.01), "C {}", f[2].total_db);
    }

    // Source: definition of an ideal N-way split, 10 log10 N: 2 -> 3.0103, 3 -> 4.7712,
    // 4 -> 6.0206 dB; plus the tabulated excess (0.3, 0.5, 0.6). 5 ways takes the 6-way
    // excess (0.8): 10 log10 5 = 6.9897 -> 7.7897. One way is no splitter.
    #[test]
    fn splitter_loss_is_ideal_split_plus_excess() {
        let c = lib().components;
        for (n, expect) in [
            (1, 0.0),
            (2, 3.0103 + 0.3),
            (3, 4.7712 + 0.5),
            (4, 6.0206 + 0.6),
            (5, 6.9897 + 0.8),
        ] {
            let got = splitter_loss_db(n, &c).unwrap();
            assert!(close(got, expect, 1e-3), "{n} ways: {got}");
        }
        assert!(matches!(
            splitter_loss_db(9, &c),
            Err(DistError::SplitterTooLarge {
                ways: 9,
                max_ways: 8
            })
        ));
        assert!(splitter_loss_db(0, &c).is_err());
    }

    fn feed_with_loss(total_db: f64) -> Feed {
        Feed {
            antenna: "X".into(),
            floor: "L0".into(),
            horizontal_m: 0.0,
            riser_m: 0.0,
            cable_m: 0.0,
            cable_db: total_db,
            splitter_db: 0.0,
            connectors: 0,
            connector_db: 0.0,
            total_db,
        }
    }

    // Source: power of N equal channels, P_comp = P_ch + 10 log10 N (10 log10 4 = 6.0206,
    // 10 log10 8 = 9.0309). Hand calculation: worst feed 30 dB, port -10 dBm -> 20 dBm per channel.
    #[test]
    fn head_end_power_per_channel_and_composite() {
        let f = [feed_with_loss(12.0), feed_with_loss(30.0)];
        for (n, gain) in [(1, 0.0), (4, 6.0206), (8, 9.0309)] {
            let p = head_end_power(&f, -10.0, n, 40.0, 3.0).unwrap();
            assert!(
                close(p.per_channel_dbm, 20.0, 1e-9),
                "{n}: per channel {}",
                p.per_channel_dbm
            );
            assert!(close(
                p.composite_dbm - 10.0 * f64::from(n).log10(),
                p.per_channel_dbm,
                1e-9
            ));
            assert!(
                close(p.composite_dbm, 20.0 + gain, 1e-3),
                "{n}: composite {}",
                p.composite_dbm
            );
            assert!(close(p.margin_db, 40.0 - 3.0 - p.composite_dbm, 1e-9));
        }
    }

    // Source: hand calculation. One channel, worst feed 30 dB, port -10 dBm -> composite 20 dBm;
    // back-off 3 dB, so a 23 dBm rating leaves exactly 0 dB (not exceeded) and 22.99 dBm -0.01 dB.
    #[test]
    fn exceeded_flips_at_the_limit() {
        let f = [feed_with_loss(30.0)];
        let at = head_end_power(&f, -10.0, 1, 23.0, 3.0).unwrap();
        assert!(close(at.margin_db, 0.0, 1e-9) && !at.exceeded, "{at:?}");
        let below = head_end_power(&f, -10.0, 1, 22.99, 3.0).unwrap();
        assert!(
            below.exceeded && close(below.margin_db, -0.01, 1e-9),
            "{below:?}"
        );
    }

    #[test]
    fn head_end_power_rejects_bad_input() {
        // Source: common practice (no channel, no power; no antenna, nothing to budget).
        let f = [feed_with_loss(30.0)];
        assert!(head_end_power(&f, -10.0, 0, 40.0, 3.0)
            .unwrap_err()
            .to_string()
            .contains("channels"));
        assert!(head_end_power(&[], -10.0, 1, 40.0, 3.0).is_err());
        assert!(head_end_power(&f, f64::NAN, 1, 40.0, 3.0).is_err());
        assert!(head_end_power(&f, -10.0, 1, 40.0, -1.0).is_err());
    }

    // Source: hand calculation of log-log interpolation between (100 MHz, 10 dB) and
    // (400 MHz, 20 dB): slope ln 2 / ln 4 = 0.5, so at 200 MHz 10 x 2^0.5 = 14.1421 dB.
    #[test]
    fn interpolation_is_log_log() {
        let lib = lib();
        let c = lib.cable("two-point").unwrap();
        assert_eq!(c.loss_db_per_100m_at(100.0).unwrap(), 10.0);
        assert_eq!(c.loss_db_per_100m_at(400.0).unwrap(), 20.0);
        let mid = c.loss_db_per_100m_at(200.0).unwrap();
        assert!(close(mid, 14.1421, 1e-4), "{mid}");
        let err = c.loss_db_per_100m_at(450.0).unwrap_err();
        assert!(matches!(err, DistError::OutOfRange { .. }), "{err:?}");
        assert!(err.to_string().contains("from 100 to 400 MHz"), "{err}");
        assert!(c.loss_db_per_100m_at(99.0).is_err());
        assert!(c.loss_db_per_100m_at(f64::NAN).is_err());
    }

    // Source: common practice: coax attenuation rises with frequency, and a thicker cable of
    // the same construction loses less; the built-in table covers 150 to 6000 MHz (the
    // 7/8-inch size to 5000 MHz, its usual upper limit, from memory).
    #[test]
    fn builtin_table_is_sane() {
        let lib = CableLibrary::builtin().unwrap();
        assert!(lib.cables.len() >= 4);
        for c in &lib.cables {
            assert!(
                !c.source.trim().is_empty() && c.loss_db_per_100m.len() >= 2,
                "{}",
                c.id
            );
            assert!(
                c.loss_db_per_100m
                    .windows(2)
                    .all(|w| w[0].0 < w[1].0 && w[0].1 < w[1].1),
                "{}",
                c.id
            );
            assert!(c.loss_db_per_100m.iter().all(|p| p.1 > 0.0), "{}", c.id);
            assert!(
                c.loss_db_per_100m_at(150.0).is_ok() && c.loss_db_per_100m_at(5000.0).is_ok(),
                "{}",
                c.id
            );
        }
        let at = |id: &str, f: f64| lib.cable(id).unwrap().loss_db_per_100m_at(f).unwrap();
        for f in [150.0, 900.0, 2500.0, 5000.0] {
            assert!(at("coax-7-8-inch-foam", f) < at("coax-half-inch-foam", f));
            assert!(at("coax-half-inch-foam", f) < at("coax-3-8-inch-plenum", f));
            assert!(at("coax-3-8-inch-plenum", f) < at("coax-1-4-inch-jumper", f));
        }
        assert!(lib
            .cable("coax-half-inch-foam")
            .unwrap()
            .loss_db_per_100m_at(6000.0)
            .is_ok());
    }

    // Source: common practice (a table with a missing key, a negative loss or shuffled
    // frequencies cannot be used and the message must point at the fault).
    #[test]
    fn parse_rejects_bad_tables() {
        let missing = TEST_TABLE.replacen("source = \"test value\"\n", "", 1);
        let err = CableLibrary::parse(&missing).unwrap_err();
        assert!(
            matches!(err, DistError::Parse(_)) && err.to_string().contains("source"),
            "{err}"
        );
        let negative = TEST_TABLE.replacen(
            "[[100, 10.0], [10000, 10.0]]",
            "[[100, -1.0], [10000, 10.0]]",
            1,
        );
        let err = CableLibrary::parse(&negative).unwrap_err();
        assert!(
            err.to_string().contains("flat-10") && err.to_string().contains("positive"),
            "{err}"
        );
        let unsorted = TEST_TABLE.replacen(
            "[[100, 10.0], [10000, 10.0]]",
            "[[10000, 10.0], [100, 10.0]]",
            1,
        );
        let err = CableLibrary::parse(&unsorted).unwrap_err();
        assert!(err.to_string().contains("ascending"), "{err}");
        let no_source = TEST_TABLE.replacen(
            "slack_fraction_source = \"test value\"",
            "slack_fraction_source = \"\"",
            1,
        );
        assert!(CableLibrary::parse(&no_source)
            .unwrap_err()
            .to_string()
            .contains("slack_fraction_source"));
        let twice = TEST_TABLE.replacen("id = \"flat-5\"", "id = \"flat-10\"", 1);
        assert!(CableLibrary::parse(&twice)
            .unwrap_err()
            .to_string()
            .contains("twice"));
        assert!(CableLibrary::parse("not toml [").is_err());
    }

    // Source: common practice (bad input must be refused, not crash the program).
    #[test]
    fn bad_input_is_an_error() {
        let lib = lib();
        let cable = lib.cable("flat-10").unwrap();
        let c = &lib.components;
        let nan = [ant("A", "L1", 4.0, f64::NAN, 0.0)];
        assert!(feeds(&head(), &nan, cable, cable, 900.0, c).is_err());
        let mut bad_head = head();
        bad_head.y_m = f64::INFINITY;
        assert!(feeds(&bad_head, &chain(), cable, cable, 900.0, c).is_err());
        assert_eq!(
            feeds(&head(), &[], cable, cable, 900.0, c).unwrap(),
            Vec::new()
        );
        let two_elevations = [ant("A", "L1", 4.0, 1.0, 0.0), ant("B", "L1", 8.0, 1.0, 0.0)];
        assert!(feeds(&head(), &two_elevations, cable, cable, 900.0, c).is_err());
        let head_floor_moved = [ant("A", "L0", 3.0, 1.0, 0.0)];
        assert!(feeds(&head(), &head_floor_moved, cable, cable, 900.0, c).is_err());
        let duplicate = [ant("A", "L1", 4.0, 1.0, 0.0), ant("A", "L1", 4.0, 2.0, 0.0)];
        assert!(feeds(&head(), &duplicate, cable, cable, 900.0, c).is_err());
        assert!(feeds(&head(), &chain(), cable, cable, 50.0, c).is_err());
        let err = lib.cable("no-such-cable").unwrap_err().to_string();
        assert!(
            err.contains("no-such-cable") && err.contains("flat-10") && err.contains("flat-5"),
            "{err}"
        );
    }

    // Source: hand calculation on the chain above. Antennas 3. Splitters: head-end 2-way
    // (L0, L1) and L1's floor 2-way -> two 2-way. Cable (one type): horizontal 11 + 22 + 11
    // = 44 m plus L1 riser 7 m = 51 m. Connectors: 3 horizontal runs + 1 riser = 4 runs x 2 = 8.
    #[test]
    fn bill_of_quantities_of_the_chain() {
        let lib = lib();
        let cable = lib.cable("flat-10").unwrap();
        let f = feeds(&head(), &chain(), cable, cable, 900.0, &lib.components).unwrap();
        let bill = bill_of_quantities(&f, cable, cable, &lib.components, 1, "omni ceiling antenna");
        let qty = |prefix: &str| {
            bill.iter()
                .find(|l| l.item.starts_with(prefix))
                .map(|l| l.quantity)
        };
        assert_eq!(qty("antenna"), Some(3.0));
        assert_eq!(qty("splitter, 2-way"), Some(2.0));
        assert_eq!(
            bill.iter()
                .filter(|l| l.item.starts_with("splitter"))
                .count(),
            1
        );
        assert_eq!(qty("cable"), Some(51.0));
        assert_eq!(qty("connector"), Some(8.0));
        assert_eq!(qty("head-end unit"), Some(1.0));
    }

    // Source: hand calculation. With a 5 dB riser cable the types are separate lines:
    // 44 m of flat-10, 7 m of flat-5; connectors 3 x 2 = 6 and 1 x 2 = 2.
    #[test]
    fn bill_separates_cable_types() {
        let lib = lib();
        let (h, r) = (lib.cable("flat-10").unwrap(), lib.cable("flat-5").unwrap());
        let f = feeds(&head(), &chain(), h, r, 900.0, &lib.components).unwrap();
        let bill = bill_of_quantities(&f, h, r, &lib.components, 2, "antenna");
        let qty = |item: &str| bill.iter().find(|l| l.item == item).map(|l| l.quantity);
        assert_eq!(
            qty("cable: test cable, 10 dB per 100 m (flat-10)"),
            Some(44.0)
        );
        assert_eq!(qty("cable: test cable, 5 dB per 100 m (flat-5)"), Some(7.0));
        assert_eq!(
            qty("connector for test cable, 10 dB per 100 m (flat-10)"),
            Some(6.0)
        );
        assert_eq!(
            qty("connector for test cable, 5 dB per 100 m (flat-5)"),
            Some(2.0)
        );
        assert_eq!(qty("head-end unit"), Some(2.0));
    }

    proptest! {
        // Source: common practice (no input may crash the budget; a budget that is made has
        // finite, non-negative losses no smaller than the head-end split).
        #[test]
        fn feeds_never_panic(x in proptest::num::f64::ANY, y in proptest::num::f64::ANY,
                             e in proptest::num::f64::ANY, n in 0usize..12) {
            let lib = lib();
            let cable = lib.cable("flat-10").unwrap();
            let ants: Vec<_> = (0..n).map(|i| ant(&format!("A{i}"), &format!("L{}", i % 3), e, x, y)).collect();
            if let Ok(f) = feeds(&head(), &ants, cable, cable, 900.0, &lib.components) {
                for feed in &f {
                    prop_assert!(feed.total_db.is_finite() && feed.total_db >= 0.0);
                }
            }
        }
    }
}
