//! The passive network that feeds a design: each antenna's loss from the head end, the
//! head-end power per channel and composite, the antennas' conducted power and losses
//! set so that every port gets at least the design's power, and the bill of quantities.

use rfsite_design::distribution::{
    bill_of_quantities, feeds, head_end_power, AntennaPoint, CableLibrary, DistError, HeadEnd,
};
use rfsite_geometry::Point2;
use rfsite_model::{Service, Site};
use rfsite_plugin::{Distribution, FeedLine, Quantity};

use crate::floors::Placed;
use crate::options::DesignOptions;

/// A design's network: the antennas with their power and losses set, the distribution
/// and the bill of quantities.
pub struct Network {
    /// The antennas, power and losses set from their feeds.
    pub placed: Vec<Placed>,
    /// The distribution summary.
    pub distribution: Distribution,
    /// The bill of quantities.
    pub quantities: Vec<Quantity>,
}

/// The head end: the site's option, else the lowest floor's outline centre.
pub fn head_end_of(site: &Site, o: &DesignOptions) -> Option<(String, Point2)> {
    if let Some(h) = &o.head_end {
        return Some((h.floor.clone(), h.at));
    }
    let f = site.floors.first()?;
    let (lo, hi) = rfsite_geometry::polygon_bbox(&f.outline);
    Some((
        f.id.clone(),
        Point2::new((lo.x + hi.x) / 2.0, (lo.y + hi.y) / 2.0),
    ))
}

fn elevation(site: &Site, floor: &str) -> f64 {
    site.floor(floor).map(|f| f.elevation_m).unwrap_or(0.0)
}

/// Works out the network of `placed` for `svc`.
pub fn network(
    site: &Site,
    svc: &Service,
    o: &DesignOptions,
    placed: &[Placed],
) -> Result<Network, DistError> {
    let lib = CableLibrary::builtin()?;
    let (horizontal, riser) = (lib.cable(&o.cable)?, lib.cable(&o.riser_cable)?);
    let Some((hf, hp)) = head_end_of(site, o) else {
        return Err(DistError::BadInput {
            what: "head end".into(),
            problem: "the site has no floor".into(),
        });
    };
    let head = HeadEnd {
        floor_elevation_m: elevation(site, &hf),
        x_m: hp.x,
        y_m: hp.y,
        floor: hf.clone(),
    };
    let points: Vec<AntennaPoint> = placed
        .iter()
        .map(|p| AntennaPoint {
            id: p.tx.id.clone(),
            floor: p.tx.floor.clone(),
            floor_elevation_m: elevation(site, &p.tx.floor),
            x_m: p.tx.position.x,
            y_m: p.tx.position.y,
        })
        .collect();
    let fs = feeds(
        &head,
        &points,
        horizontal,
        riser,
        svc.freq_mhz,
        &lib.components,
    )?;
    let power = head_end_power(
        &fs,
        o.port_dbm,
        o.channels,
        o.max_composite_dbm,
        o.back_off_db,
    )?;
    let mut out = placed.to_vec();
    let mut lines = Vec::new();
    for (p, f) in out.iter_mut().zip(&fs) {
        p.tx.power_dbm = power.per_channel_dbm;
        p.tx.cable_loss_db = f.cable_db + f.splitter_db;
        p.tx.connector_loss_db = f.connector_db;
        lines.push(FeedLine {
            antenna: f.antenna.clone(),
            floor: f.floor.clone(),
            horizontal_m: site.units.from_m(f.horizontal_m),
            riser_m: site.units.from_m(f.riser_m),
            cable_db: f.cable_db,
            splitter_db: f.splitter_db,
            connector_db: f.connector_db,
            total_db: f.total_db,
            port_dbm: power.per_channel_dbm - f.total_db,
            eirp_dbm: p.tx.eirp_dbm(),
            mounting: p.mounting.clone(),
        });
    }
    let u = site.units;
    let distribution = Distribution {
        head_end_floor: hf,
        head_end_position: [u.from_m(hp.x), u.from_m(hp.y)],
        cable: format!(
            "{} ({}); riser {} ({})",
            horizontal.name, horizontal.id, riser.name, riser.id
        ),
        freq_mhz: svc.freq_mhz,
        channels: power.channels,
        per_channel_dbm: power.per_channel_dbm,
        composite_dbm: power.composite_dbm,
        back_off_db: power.back_off_db,
        max_composite_dbm: power.max_composite_dbm,
        margin_db: power.margin_db,
        exceeded: power.exceeded,
        feeds: lines,
    };
    let bill = bill_of_quantities(
        &fs,
        horizontal,
        riser,
        &lib.components,
        1,
        "ceiling omni antenna",
    );
    let quantities = bill
        .into_iter()
        .map(|q| Quantity {
            item: q.item,
            unit: q.unit,
            quantity: q.quantity,
            note: q.note,
        })
        .collect();
    Ok(Network {
        placed: out,
        distribution,
        quantities,
    })
}
