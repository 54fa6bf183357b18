//! `[plugins.antenna-design]`: every option with its default, read once for `check` and
//! `run` alike (so `check` rejects whatever `run` would).

use rfsite_geometry::Point2;
use rfsite_model::Site;
use rfsite_plugin::{Context, PluginError};

/// The keys the table may hold.
pub const KEYS: &[&str] = &[
    "head_end",
    "spacing",
    "clearance",
    "antenna_gain_dbi",
    "antenna_height",
    "port_power_dbm",
    "channels",
    "max_composite_dbm",
    "back_off_db",
    "cable",
    "riser_cable",
    "max_antennas_per_floor",
    "exact_budget",
    "forbid",
    "mounts",
    "services",
    "isolation_margin_db",
    "max_noise_rise_db",
];

/// A place on a floor.
#[derive(Debug, Clone, PartialEq)]
pub struct OnFloor {
    /// Floor id.
    pub floor: String,
    /// Plan position, m.
    pub at: Point2,
}

/// A zone no antenna may go in.
#[derive(Debug, Clone, PartialEq)]
pub struct Forbidden {
    /// Floor id.
    pub floor: String,
    /// Polygon, m.
    pub polygon: Vec<Point2>,
}

/// The designer's settings, lengths in metres.
#[derive(Debug, Clone, PartialEq)]
pub struct DesignOptions {
    /// Head end (riser) position; `None`: the lowest floor's outline centre, said so.
    pub head_end: Option<OnFloor>,
    /// Candidate grid spacing, m.
    pub spacing_m: f64,
    /// Least distance of a candidate from a wall, m.
    pub clearance_m: f64,
    /// Gain of each new antenna, dBi.
    pub gain_dbi: f64,
    /// Mounting height above the floor, m.
    pub height_m: f64,
    /// Power per channel wanted at every antenna port, dBm.
    pub port_dbm: f64,
    /// Channels the head end carries per service.
    pub channels: u32,
    /// Rated composite output of the head end, dBm.
    pub max_composite_dbm: f64,
    /// Back-off from the rated composite for multi-carrier operation, dB.
    pub back_off_db: f64,
    /// An off-air booster's isolation must exceed its gain by this, dB (15, common practice).
    pub isolation_margin_db: f64,
    /// Largest rise of the serving site's noise floor a booster may cause, dB (1, from memory).
    pub max_noise_rise_db: f64,
    /// Horizontal cable id (plugins/data/cables.toml).
    pub cable: String,
    /// Riser cable id.
    pub riser_cable: String,
    /// Most new antennas per floor and service.
    pub max_per_floor: usize,
    /// Subset evaluations allowed to prove a floor's antenna count minimal.
    pub exact_budget: usize,
    /// Zones where no antenna may go.
    pub forbid: Vec<Forbidden>,
    /// Extra mounting positions the site allows.
    pub mounts: Vec<OnFloor>,
    /// Services to design for (empty: every failing one).
    pub services: Vec<String>,
}

fn bad(key: &str, message: impl Into<String>) -> PluginError {
    PluginError::BadOption {
        key: key.into(),
        message: message.into(),
    }
}

/// A number within a range.
fn ranged(
    ctx: &Context<'_>,
    key: &str,
    default: f64,
    lo: f64,
    hi: f64,
) -> Result<f64, PluginError> {
    let x = ctx.option_f64(key, default)?;
    if !(lo..=hi).contains(&x) {
        return Err(bad(key, format!("must be between {lo} and {hi} (got {x})")));
    }
    Ok(x)
}

/// A whole number within a range.
fn count(ctx: &Context<'_>, key: &str, default: i64, lo: i64, hi: i64) -> Result<i64, PluginError> {
    match ctx.options.get(key) {
        None => Ok(default),
        Some(toml::Value::Integer(i)) if (lo..=hi).contains(i) => Ok(*i),
        Some(other) => Err(bad(
            key,
            format!("must be a whole number from {lo} to {hi} (got {other})"),
        )),
    }
}

/// A point `[x, y]` in site units, to metres.
fn point(site: &Site, key: &str, v: &toml::Value) -> Result<Point2, PluginError> {
    let num = |x: &toml::Value| x.as_float().or(x.as_integer().map(|i| i as f64));
    let xy: Vec<f64> = v
        .as_array()
        .map(|a| a.iter().filter_map(num).collect())
        .unwrap_or_default();
    match xy.as_slice() {
        [x, y] if x.is_finite() && y.is_finite() && x.abs() < 1e5 && y.abs() < 1e5 => {
            let m = site.units.to_m();
            Ok(Point2::new(x * m, y * m))
        }
        _ => Err(bad(key, "must be a point `[x, y]` in site units")),
    }
}

/// `{ floor = "L0", position = [x, y] }`, the floor checked.
fn on_floor(site: &Site, key: &str, v: &toml::Value) -> Result<OnFloor, PluginError> {
    let t = v
        .as_table()
        .ok_or_else(|| bad(key, "must be `{ floor = \"L0\", position = [x, y] }`"))?;
    let floor = floor_id(site, key, t.get("floor"))?;
    let at = point(
        site,
        &format!("{key}.position"),
        t.get("position").unwrap_or(&toml::Value::Boolean(false)),
    )?;
    Ok(OnFloor { floor, at })
}

fn floor_id(site: &Site, key: &str, v: Option<&toml::Value>) -> Result<String, PluginError> {
    let id = v
        .and_then(|v| v.as_str())
        .ok_or_else(|| bad(key, "needs `floor = \"<floor id>\"`"))?;
    if site.floor(id).is_none() {
        let names: Vec<&str> = site.floors.iter().map(|f| f.id.as_str()).collect();
        return Err(bad(
            key,
            format!(
                "names floor `{id}`, which does not exist (floors: {})",
                names.join(", ")
            ),
        ));
    }
    Ok(id.to_string())
}

fn list<'a>(ctx: &'a Context<'_>, key: &str) -> Result<&'a [toml::Value], PluginError> {
    match ctx.options.get(key) {
        None => Ok(&[]),
        Some(toml::Value::Array(a)) if a.len() <= 1000 => Ok(a),
        Some(_) => Err(bad(key, "must be a list (at most 1000 entries)")),
    }
}

fn forbidden(site: &Site, v: &toml::Value) -> Result<Forbidden, PluginError> {
    let t = v.as_table().ok_or_else(|| {
        bad(
            "forbid",
            "each entry is `{ floor = \"L1\", polygon = [[x, y], ...] }`",
        )
    })?;
    let floor = floor_id(site, "forbid", t.get("floor"))?;
    let pts = t
        .get("polygon")
        .and_then(|p| p.as_array())
        .map(|a| a.as_slice())
        .unwrap_or(&[]);
    let polygon = pts
        .iter()
        .map(|p| point(site, "forbid.polygon", p))
        .collect::<Result<Vec<_>, _>>()?;
    if polygon.len() < 3 || polygon.len() > 10_000 {
        return Err(bad("forbid", "a polygon needs 3 to 10 000 points"));
    }
    Ok(Forbidden { floor, polygon })
}

fn services(site: &Site, ctx: &Context<'_>) -> Result<Vec<String>, PluginError> {
    list(ctx, "services")?
        .iter()
        .map(|v| match v.as_str() {
            Some(s) if site.service(s).is_some() => Ok(s.to_string()),
            _ => Err(bad(
                "services",
                format!("names a service that does not exist: {v}"),
            )),
        })
        .collect()
}

/// A cable id of the built-in table (plugins/data/cables.toml).
fn cable(ctx: &Context<'_>, key: &str, default: &str) -> Result<String, PluginError> {
    let id = ctx.option_str(key, default)?;
    let lib = rfsite_design::distribution::CableLibrary::builtin()
        .map_err(|e| bad(key, e.to_string()))?;
    lib.cable(&id).map_err(|e| bad(key, e.to_string()))?;
    Ok(id)
}

/// Reads and checks every option.
pub fn read(ctx: &Context<'_>) -> Result<DesignOptions, PluginError> {
    let site = ctx.site;
    let m = site.units.to_m();
    let head_end = ctx
        .options
        .get("head_end")
        .map(|v| on_floor(site, "head_end", v))
        .transpose()?;
    Ok(DesignOptions {
        head_end,
        spacing_m: ranged(ctx, "spacing", 3.0 / m, 0.5 / m, 50.0 / m)? * m,
        clearance_m: ranged(ctx, "clearance", 0.5 / m, 0.0, 10.0 / m)? * m,
        gain_dbi: ranged(ctx, "antenna_gain_dbi", 2.0, -10.0, 20.0)?,
        height_m: ranged(ctx, "antenna_height", 2.7 / m, 0.5 / m, 30.0 / m)? * m,
        port_dbm: ranged(ctx, "port_power_dbm", 5.0, -20.0, 40.0)?,
        channels: count(ctx, "channels", 4, 1, 256)? as u32,
        max_composite_dbm: ranged(ctx, "max_composite_dbm", 33.0, 0.0, 60.0)?,
        back_off_db: ranged(ctx, "back_off_db", 3.0, 0.0, 20.0)?,
        isolation_margin_db: ranged(
            ctx,
            "isolation_margin_db",
            rfsite_physics::booster::DEFAULT_ISOLATION_MARGIN_DB,
            0.0,
            60.0,
        )?,
        max_noise_rise_db: ranged(
            ctx,
            "max_noise_rise_db",
            rfsite_physics::booster::DEFAULT_MAX_NOISE_RISE_DB,
            0.01,
            20.0,
        )?,
        cable: cable(ctx, "cable", "coax-half-inch-foam")?,
        riser_cable: cable(ctx, "riser_cable", "coax-7-8-inch-foam")?,
        max_per_floor: count(ctx, "max_antennas_per_floor", 12, 0, 64)? as usize,
        exact_budget: count(ctx, "exact_budget", 300, 0, 100_000)? as usize,
        forbid: list(ctx, "forbid")?
            .iter()
            .map(|v| forbidden(site, v))
            .collect::<Result<_, _>>()?,
        mounts: list(ctx, "mounts")?
            .iter()
            .map(|v| on_floor(site, "mounts", v))
            .collect::<Result<_, _>>()?,
        services: services(site, ctx)?,
    })
}
