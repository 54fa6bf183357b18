//! `rfsite calc NAME [FLAGS] [--json]`: one published calculation.

use rfsite_model::{MaterialLibrary, GRAZING_LIMIT_DEG};
use rfsite_physics::p2040::Polarization;
use rfsite_physics::{
    antenna, booster, cost231, exposure, fspl, p1238, p2109, standing_wave, stats,
};
use serde_json::{json, Map, Value};

use crate::Outcome;

/// Arguments of `calc`.
#[derive(clap::Args)]
pub struct Args {
    #[command(subcommand)]
    pub what: What,
    /// Print one JSON object.
    #[arg(long, global = true)]
    pub json: bool,
}

/// The calculations.
#[derive(clap::Subcommand)]
pub enum What {
    /// Free-space loss, ITU-R P.525.
    #[command(allow_negative_numbers = true)]
    Fspl {
        #[arg(long)]
        freq_mhz: f64,
        #[arg(long)]
        distance_m: f64,
    },
    /// Loss and reflection of one material, ITU-R P.2040 or the empirical library.
    #[command(allow_negative_numbers = true)]
    Material {
        #[arg(long)]
        material: String,
        #[arg(long)]
        freq_mhz: f64,
        #[arg(long, default_value_t = 100.0)]
        thickness_mm: f64,
        /// Incidence angle from the wall's normal, degrees, 0 to 89.9 (the grazing limit).
        #[arg(long, default_value_t = 0.0)]
        incidence_deg: f64,
        /// te (electric field parallel to the wall face, perpendicular to the plane of
        /// incidence) or tm.
        #[arg(long, default_value = "te")]
        polarization: String,
    },
    /// Building entry loss, ITU-R P.2109.
    #[command(allow_negative_numbers = true)]
    Bel {
        #[arg(long)]
        freq_mhz: f64,
        #[arg(long)]
        building: String,
        #[arg(long)]
        probability: f64,
        #[arg(long, default_value_t = 0.0)]
        elevation_deg: f64,
    },
    /// Standing wave in front of a reflector.
    #[command(allow_negative_numbers = true)]
    StandingWave {
        #[arg(long)]
        material: String,
        #[arg(long)]
        freq_mhz: f64,
        #[arg(long, default_value_t = 100.0)]
        thickness_mm: f64,
        #[arg(long, default_value_t = 2.0)]
        max_distance_m: f64,
    },
    /// Compliance distance from EIRP against an exposure limit.
    #[command(allow_negative_numbers = true)]
    Exposure {
        /// EIRP in watts (or give --eirp-dbm).
        #[arg(
            long,
            required_unless_present = "eirp_dbm",
            conflicts_with = "eirp_dbm"
        )]
        eirp_w: Option<f64>,
        /// EIRP in dBm (or give --eirp-w).
        #[arg(long)]
        eirp_dbm: Option<f64>,
        #[arg(long)]
        freq_mhz: f64,
        #[arg(long)]
        limit: String,
        /// Largest dimension of the antenna, m, for the Fraunhofer distance 2 D²/λ.
        #[arg(long)]
        antenna_size_m: Option<f64>,
    },
    /// Field strength from received power (isotropic antenna).
    #[command(allow_negative_numbers = true)]
    FieldStrength {
        #[arg(long)]
        dbm: f64,
        #[arg(long)]
        freq_mhz: f64,
    },
    /// Fraction of a cell area above threshold (Jakes, after Reudink).
    #[command(allow_negative_numbers = true)]
    AreaCoverage {
        #[arg(long)]
        sigma_db: f64,
        #[arg(long)]
        exponent: f64,
        #[arg(long)]
        edge_probability: f64,
    },
    /// Indoor site-general loss, ITU-R P.1238.
    #[command(allow_negative_numbers = true)]
    Indoor {
        #[arg(long)]
        freq_mhz: f64,
        #[arg(long)]
        distance_m: f64,
        #[arg(long, default_value_t = 0)]
        floors: u32,
        #[arg(long, default_value = "office")]
        environment: String,
    },
    /// COST 231 multi-wall loss.
    #[command(allow_negative_numbers = true)]
    Multiwall {
        #[arg(long)]
        freq_mhz: f64,
        #[arg(long)]
        distance_m: f64,
        /// Wall losses in dB, comma separated.
        #[arg(long, value_delimiter = ',', default_value = "")]
        walls_db: Vec<String>,
        #[arg(long, default_value_t = 0)]
        floors: u32,
        #[arg(long, default_value_t = 18.3)]
        floor_loss_db: f64,
        #[arg(long, default_value_t = 0.46)]
        b: f64,
    },
    /// 3GPP TR 38.901 sector element gain.
    #[command(allow_negative_numbers = true)]
    Pattern {
        /// Zenith angle, degrees (90 = horizon).
        #[arg(long, default_value_t = 90.0)]
        theta_deg: f64,
        /// Azimuth from boresight, degrees.
        #[arg(long, default_value_t = 0.0)]
        phi_deg: f64,
        #[arg(long, default_value_t = 8.0)]
        gain_dbi: f64,
    },
    /// Rise of a serving site's uplink noise floor caused by a booster's noise.
    #[command(allow_negative_numbers = true)]
    NoiseRise {
        /// Booster noise at the receiver relative to its noise floor, dB (or give the
        /// three levels below).
        #[arg(
            long,
            required_unless_present = "noise_out_dbm",
            conflicts_with_all = ["noise_out_dbm", "link_loss_db", "noise_floor_dbm"]
        )]
        delta_db: Option<f64>,
        /// Booster noise output at its donor port over the receiver bandwidth, dBm.
        #[arg(long, requires_all = ["link_loss_db", "noise_floor_dbm"])]
        noise_out_dbm: Option<f64>,
        /// Loss from the booster's donor port to the receiver input, dB.
        #[arg(long)]
        link_loss_db: Option<f64>,
        /// The receiver's own noise floor, dBm.
        #[arg(long)]
        noise_floor_dbm: Option<f64>,
    },
    /// Booster downlink chain: gain for a wanted output, levels, composite, EIRP.
    #[command(allow_negative_numbers = true)]
    Booster {
        /// Isotropic level at the donor antenna, dBm per channel.
        #[arg(long)]
        roof_dbm: f64,
        #[arg(long)]
        donor_gain_dbi: f64,
        #[arg(long)]
        donor_cable_db: f64,
        /// Wanted booster output, dBm per channel.
        #[arg(long)]
        output_dbm: f64,
        #[arg(long, default_value_t = 1)]
        channels: u32,
        /// Splitters, server cable and connectors, booster output to server antenna, dB.
        #[arg(long, default_value_t = 0.0)]
        distribution_db: f64,
        #[arg(long, default_value_t = 0.0)]
        server_gain_dbi: f64,
        /// The booster's rated composite output, dBm.
        #[arg(long)]
        rated_composite_dbm: Option<f64>,
        /// Back-off below the rated composite output, dB (default 0).
        #[arg(long, requires = "rated_composite_dbm")]
        back_off_db: Option<f64>,
    },
    /// Isolation between a booster's donor and server antennas and the stable gain.
    #[command(allow_negative_numbers = true)]
    Isolation {
        #[arg(long)]
        distance_m: f64,
        #[arg(long)]
        freq_mhz: f64,
        /// Slabs and walls between the antennas, dB.
        #[arg(long, default_value_t = 0.0)]
        obstruction_db: f64,
        /// Donor antenna gain toward the server antenna, dBi.
        #[arg(long, default_value_t = 0.0)]
        donor_gain_dbi: f64,
        /// Server antenna gain toward the donor antenna, dBi.
        #[arg(long, default_value_t = 0.0)]
        server_gain_dbi: f64,
        /// Both antennas' cable losses, dB.
        #[arg(long, default_value_t = 0.0)]
        cables_db: f64,
        /// Isolation kept above the gain, dB.
        #[arg(long, default_value_t = booster::DEFAULT_ISOLATION_MARGIN_DB)]
        margin_db: f64,
        /// A booster gain to check against the stable gain, dB.
        #[arg(long)]
        gain_db: Option<f64>,
    },
}

fn bad(msg: String) -> Result<Value, String> {
    Err(msg)
}

fn positive(name: &str, v: f64) -> Result<(), String> {
    if v.is_finite() && v > 0.0 {
        Ok(())
    } else {
        Err(format!("--{name} must be a positive number (got {v})"))
    }
}

fn material_of(lib: &MaterialLibrary, id: &str) -> Result<rfsite_model::Material, String> {
    lib.get(id).cloned().ok_or_else(|| {
        format!(
            "unknown material `{id}`\n  = hint: {}",
            rfsite_model::diag::unknown_name_hint("material", id, lib.ids())
        )
    })
}

/// `calc material`: transmission and reflection of one material at the given incidence
/// angle and polarisation (ITU-R P.2040-3 §3 for slabs; measured tables are
/// angle-independent).
fn material_json(
    lib: &MaterialLibrary,
    material: &str,
    freq_mhz: f64,
    thickness_mm: f64,
    incidence_deg: f64,
    polarization: &str,
) -> Result<Value, String> {
    positive("freq-mhz", freq_mhz)?;
    positive("thickness-mm", thickness_mm)?;
    if !(0.0..=GRAZING_LIMIT_DEG).contains(&incidence_deg) {
        return bad(format!(
            "--incidence-deg must be from 0 to {GRAZING_LIMIT_DEG} degrees from the wall's normal (got {incidence_deg})\n  = hint: beyond {GRAZING_LIMIT_DEG}° the path runs along the wall; a prediction charges such a crossing the loss at {GRAZING_LIMIT_DEG}° (the grazing rule), which is `--incidence-deg {GRAZING_LIMIT_DEG}` here"
        ));
    }
    let pol = match polarization {
        "te" => Polarization::Te,
        "tm" => Polarization::Tm,
        p => return bad(format!("--polarization must be te or tm (got {p})")),
    };
    let m = material_of(lib, material)?;
    let t = thickness_mm / 1000.0;
    let cos = incidence_deg.to_radians().cos();
    let l = m.crossing_loss(freq_mhz, t, cos, pol);
    let r = m.reflection_coefficient(freq_mhz, t, cos, pol);
    let (eps, sigma) = match &m.model {
        rfsite_model::MaterialModel::Itu(i) => (
            Some(i.permittivity_real(freq_mhz / 1000.0)),
            Some(i.conductivity_s_per_m(freq_mhz / 1000.0)),
        ),
        rfsite_model::MaterialModel::CustomSlab {
            eps_real,
            sigma_s_per_m,
        } => (Some(*eps_real), Some(*sigma_s_per_m)),
        _ => (None, None),
    };
    let refl_db = (r.norm() > 0.0).then(|| -20.0 * r.norm().log10());
    let angle_note = (!m.model.angle_dependent()).then_some(
        "measured table: the loss and reflection do not depend on the angle or polarisation",
    );
    Ok(
        json!({"material": m.id, "model": m.model_label(), "permittivity_real": eps, "conductivity_s_per_m": sigma,
        "incidence_deg": incidence_deg, "polarization": polarization,
        "transmission_loss_db": l.loss_db, "reflection_loss_db": refl_db,
        "extrapolated": l.note.is_some(), "warning": l.note.map(|n| n.message()), "note": angle_note, "source": m.source}),
    )
}

fn compute(w: &What) -> Result<Value, String> {
    let lib = MaterialLibrary::builtin();
    match w {
        What::Fspl {
            freq_mhz,
            distance_m,
        } => {
            positive("freq-mhz", *freq_mhz)?;
            positive("distance-m", *distance_m)?;
            let note = fspl::fspl_range_note(*freq_mhz, *distance_m);
            Ok(
                json!({"loss_db": fspl::fspl_db(*freq_mhz, *distance_m), "extrapolated": note.is_some(), "warning": note.map(|n| n.message()), "source": "ITU-R P.525-4 eq. (1)"}),
            )
        }
        What::Material {
            material,
            freq_mhz,
            thickness_mm,
            incidence_deg,
            polarization,
        } => material_json(
            &lib,
            material,
            *freq_mhz,
            *thickness_mm,
            *incidence_deg,
            polarization,
        ),
        What::Bel {
            freq_mhz,
            building,
            probability,
            elevation_deg,
        } => {
            positive("freq-mhz", *freq_mhz)?;
            let b = match building.as_str() {
                "traditional" => p2109::BuildingType::Traditional,
                "thermally-efficient" => p2109::BuildingType::ThermallyEfficient,
                x => {
                    return bad(format!(
                        "--building must be traditional or thermally-efficient (got {x})"
                    ))
                }
            };
            let f = freq_mhz / 1000.0;
            let l = p2109::building_entry_loss_db(f, *probability, *elevation_deg, b)
                .map_err(|e| e.to_string())?;
            let note = p2109::bel_range_note(f);
            Ok(
                json!({"loss_db": l, "extrapolated": note.is_some(), "warning": note.map(|n| n.message()), "source": "ITU-R P.2109-2"}),
            )
        }
        What::StandingWave {
            material,
            freq_mhz,
            thickness_mm,
            max_distance_m,
        } => {
            positive("freq-mhz", *freq_mhz)?;
            positive("max-distance-m", *max_distance_m)?;
            let m = material_of(&lib, material)?;
            // Normal incidence: the standing-wave formula is the normal-incidence one;
            // TE is the electric-field ratio.
            let g =
                m.reflection_coefficient(*freq_mhz, thickness_mm / 1000.0, 1.0, Polarization::Te);
            let depth = standing_wave::peak_to_null_db(g.norm());
            let depth = if depth.is_finite() { Some(depth) } else { None };
            Ok(
                json!({"gamma_abs": g.norm(), "gamma_phase_deg": g.arg().to_degrees(), "nulls_m": standing_wave::nulls_m(g, *freq_mhz, *max_distance_m),
                "peaks_m": standing_wave::peaks_m(g, *freq_mhz, *max_distance_m), "peak_to_null_db": depth,
                "quarter_wave_m": standing_wave::quarter_wave_spacing_m(*freq_mhz)}),
            )
        }
        What::Exposure {
            eirp_w,
            eirp_dbm,
            freq_mhz,
            limit,
            antenna_size_m,
        } => exposure_json(*eirp_w, *eirp_dbm, *freq_mhz, limit, *antenna_size_m),
        What::FieldStrength { dbm, freq_mhz } => {
            positive("freq-mhz", *freq_mhz)?;
            Ok(json!({"dbuv_per_m": fspl::dbm_to_dbuv_per_m(*dbm, *freq_mhz)}))
        }
        What::AreaCoverage {
            sigma_db,
            exponent,
            edge_probability,
        } => {
            let f = stats::area_coverage_fraction(*sigma_db, *exponent, *edge_probability)
                .map_err(|e| e.to_string())?;
            Ok(json!({"area_fraction": f, "source": "Jakes (1974) section 2.3, after Reudink"}))
        }
        What::Indoor {
            freq_mhz,
            distance_m,
            floors,
            environment,
        } => {
            positive("freq-mhz", *freq_mhz)?;
            positive("distance-m", *distance_m)?;
            let env = match environment.as_str() {
                "residential" => p1238::IndoorEnvironment::Residential,
                "office" => p1238::IndoorEnvironment::Office,
                "commercial" => p1238::IndoorEnvironment::Commercial,
                x => {
                    return bad(format!(
                        "--environment must be residential, office or commercial (got {x})"
                    ))
                }
            };
            let r = p1238::indoor_loss_db(*freq_mhz, *distance_m, *floors, env)
                .map_err(|e| e.to_string())?;
            Ok(
                json!({"loss_db": r.loss_db, "extrapolated": !r.range_notes.is_empty(), "notes": r.notes, "source": "ITU-R P.1238 site-general model"}),
            )
        }
        What::Multiwall {
            freq_mhz,
            distance_m,
            walls_db,
            floors,
            floor_loss_db,
            b,
        } => {
            positive("freq-mhz", *freq_mhz)?;
            positive("distance-m", *distance_m)?;
            let mut walls = Vec::new();
            for w in walls_db.iter().filter(|w| !w.trim().is_empty()) {
                let v: f64 = w
                    .trim()
                    .parse()
                    .map_err(|_| format!("--walls-db: `{w}` is not a number"))?;
                if v < 0.0 {
                    return bad(format!(
                        "--walls-db: a wall loss cannot be negative (got {v})"
                    ));
                }
                walls.push(v);
            }
            let l0 = fspl::fspl_db(*freq_mhz, *distance_m);
            let l = cost231::multiwall_loss_db(l0, 0.0, &walls, *floors, *floor_loss_db, *b);
            Ok(
                json!({"loss_db": l, "free_space_db": l0, "walls_db": walls.iter().sum::<f64>(), "floor_term_db": cost231::floor_term_db(*floors, *floor_loss_db, *b), "source": "COST 231 Final Report (1999) section 4.7"}),
            )
        }
        What::Pattern {
            theta_deg,
            phi_deg,
            gain_dbi,
        } => {
            if !(0.0..=180.0).contains(theta_deg) {
                return bad(format!(
                    "--theta-deg must be from 0 to 180 (got {theta_deg})"
                ));
            }
            let p = antenna::ElementPattern {
                g_max_dbi: *gain_dbi,
                ..Default::default()
            };
            Ok(
                json!({"gain_dbi": p.gain_dbi(*theta_deg, *phi_deg), "source": "3GPP TR 38.901 Table 7.3-1"}),
            )
        }
        What::NoiseRise {
            delta_db,
            noise_out_dbm,
            link_loss_db,
            noise_floor_dbm,
        } => noise_rise_json(*delta_db, *noise_out_dbm, *link_loss_db, *noise_floor_dbm),
        What::Booster {
            roof_dbm,
            donor_gain_dbi,
            donor_cable_db,
            output_dbm,
            channels,
            distribution_db,
            server_gain_dbi,
            rated_composite_dbm,
            back_off_db,
        } => booster_json(
            &booster::DownlinkChain {
                roof_level_dbm: *roof_dbm,
                donor_gain_dbi: *donor_gain_dbi,
                donor_cable_db: *donor_cable_db,
                gain_db: booster::downlink_gain_db(
                    *output_dbm,
                    *roof_dbm,
                    *donor_gain_dbi,
                    *donor_cable_db,
                ),
                distribution_db: *distribution_db,
                server_gain_dbi: *server_gain_dbi,
            },
            *channels,
            rated_composite_dbm.map(|r| (r, back_off_db.unwrap_or(0.0))),
        ),
        What::Isolation {
            distance_m,
            freq_mhz,
            obstruction_db,
            donor_gain_dbi,
            server_gain_dbi,
            cables_db,
            margin_db,
            gain_db,
        } => isolation_json(
            &IsolationInput {
                distance_m: *distance_m,
                freq_mhz: *freq_mhz,
                obstruction_db: *obstruction_db,
                donor_gain_dbi: *donor_gain_dbi,
                server_gain_dbi: *server_gain_dbi,
                cables_db: *cables_db,
            },
            *margin_db,
            *gain_db,
        ),
    }
}

/// Runs `calc`.
pub fn run(a: Args) -> Outcome {
    match compute(&a.what) {
        Ok(v) => {
            if a.json {
                println!("{}", serde_json::to_string(&v).unwrap_or_default());
            } else if let Value::Object(m) = v {
                print_plain(&m);
            }
            Outcome::Ok
        }
        Err(e) => {
            eprintln!("error: {e}");
            Outcome::BadInput
        }
    }
}

fn print_plain(m: &Map<String, Value>) {
    for (k, v) in m {
        match v {
            Value::Null => {}
            Value::Number(n) => println!("{k}: {:.4}", n.as_f64().unwrap_or(0.0)),
            Value::String(s) => println!("{k}: {s}"),
            other => println!("{k}: {other}"),
        }
    }
    if let Some(Value::String(w)) = m.get("warning") {
        eprintln!("warning: {w}");
    }
}

/// `calc exposure`: the far-field compliance distance, and whether it lies inside the
/// distance where the far-field formula holds.
fn exposure_json(
    eirp_w: Option<f64>,
    eirp_dbm: Option<f64>,
    freq_mhz: f64,
    limit: &str,
    antenna_size_m: Option<f64>,
) -> Result<serde_json::Value, String> {
    let eirp_w = match (eirp_w, eirp_dbm) {
        (Some(w), _) => w,
        (None, Some(dbm)) if dbm.is_finite() => 10f64.powf((dbm - 30.0) / 10.0),
        (None, Some(_)) => return Err("--eirp-dbm must be a finite number".into()),
        (None, None) => return Err("give --eirp-w or --eirp-dbm".into()),
    };
    positive("eirp-w", eirp_w)?;
    positive("freq-mhz", freq_mhz)?;
    if let Some(d) = antenna_size_m {
        positive("antenna-size-m", d)?;
    }
    let lim = exposure::ExposureLimit::from_id(limit).ok_or_else(|| format!("--limit must be one of fcc-general, fcc-occupational, icnirp-general, icnirp-occupational (got {limit})"))?;
    let s = exposure::limit_w_per_m2(lim, freq_mhz).map_err(|e| e.to_string())?;
    let d = exposure::compliance_distance_m(eirp_w, s);
    let far = exposure::far_field_min_distance_m(freq_mhz, antenna_size_m);
    let note = if d < far {
        format!("the far-field distance {d:.3} m lies inside the near field (the formula holds from {far:.3} m): the far-field formula does not give the compliance distance there; evaluate by measurement or a near-field method")
    } else {
        "far-field estimate; near-field and multiple sources need a full evaluation".to_string()
    };
    Ok(
        json!({"eirp_w": eirp_w, "eirp_dbm": 10.0 * eirp_w.log10() + 30.0, "limit_w_per_m2": s, "distance_m": d,
        "far_field_min_m": far, "within_near_field": d < far, "source": lim.source(), "note": note}),
    )
}

/// Checks a flag's value is a finite number.
fn finite(name: &str, v: f64) -> Result<(), String> {
    if v.is_finite() {
        Ok(())
    } else {
        Err(format!("--{name} must be a finite number (got {v})"))
    }
}

/// Checks a flag's value is a finite number not below 0.
fn non_negative(name: &str, v: f64) -> Result<(), String> {
    if v.is_finite() && v >= 0.0 {
        Ok(())
    } else {
        Err(format!("--{name} must be a number not below 0 (got {v})"))
    }
}

/// `calc noise-rise`: the booster noise at the receiver relative to its floor (given,
/// or from the three levels) and the rise of the floor it causes.
fn noise_rise_json(
    delta_db: Option<f64>,
    noise_out_dbm: Option<f64>,
    link_loss_db: Option<f64>,
    noise_floor_dbm: Option<f64>,
) -> Result<Value, String> {
    let delta = match (delta_db, noise_out_dbm, link_loss_db, noise_floor_dbm) {
        (Some(d), _, _, _) => {
            finite("delta-db", d)?;
            d
        }
        (None, Some(n), Some(l), Some(f)) => {
            finite("noise-out-dbm", n)?;
            finite("link-loss-db", l)?;
            finite("noise-floor-dbm", f)?;
            booster::noise_delta_at_receiver_db(n, l, f)
        }
        _ => {
            return bad(
                "give --delta-db, or --noise-out-dbm with --link-loss-db and --noise-floor-dbm"
                    .into(),
            )
        }
    };
    let rise = booster::noise_rise_db(delta);
    let limit = booster::DEFAULT_MAX_NOISE_RISE_DB;
    Ok(
        json!({"delta_db": delta, "noise_rise_db": rise, "planning_limit_db": limit,
        "above_planning_limit": rise > limit,
        "source": "power sum 10 log10(1 + 10^(dN/10)); planning limit about 1 dB, from memory"}),
    )
}

/// `calc booster`: the downlink chain for the wanted output, its composite over the
/// channels, and the margin to the rated composite output less the back-off.
fn booster_json(
    chain: &booster::DownlinkChain,
    channels: u32,
    rated: Option<(f64, f64)>,
) -> Result<Value, String> {
    finite("roof-dbm", chain.roof_level_dbm)?;
    finite("donor-gain-dbi", chain.donor_gain_dbi)?;
    non_negative("donor-cable-db", chain.donor_cable_db)?;
    finite("output-dbm", chain.output_dbm())?;
    non_negative("distribution-db", chain.distribution_db)?;
    finite("server-gain-dbi", chain.server_gain_dbi)?;
    if channels == 0 {
        return bad("--channels must be at least 1 (got 0)".into());
    }
    let composite =
        booster::composite_dbm(chain.output_dbm(), channels).map_err(|e| e.to_string())?;
    let mut v = json!({"gain_db": chain.gain_db, "input_dbm": chain.input_dbm(),
        "output_per_channel_dbm": chain.output_dbm(), "channels": channels,
        "composite_dbm": composite, "port_dbm": chain.port_dbm(), "eirp_dbm": chain.eirp_dbm(),
        "source": "link budget per channel; composite P + 10 log10 N (common practice)"});
    if let (Some((r, b)), Value::Object(m)) = (rated, &mut v) {
        rating_fields(m, composite, r, b)?;
    }
    Ok(v)
}

/// Adds the rated output, the back-off, the margin and the EXCEEDED verdict.
fn rating_fields(
    m: &mut Map<String, Value>,
    composite: f64,
    rated_dbm: f64,
    back_off_db: f64,
) -> Result<(), String> {
    finite("rated-composite-dbm", rated_dbm)?;
    non_negative("back-off-db", back_off_db)?;
    let allowed = rated_dbm - back_off_db;
    let margin = allowed - composite;
    let verdict = if margin < 0.0 {
        format!("EXCEEDED: the composite output is {:.2} dB above the rated {rated_dbm} dBm less {back_off_db} dB back-off", -margin)
    } else {
        format!("within the rated {rated_dbm} dBm less {back_off_db} dB back-off by {margin:.2} dB")
    };
    m.insert("rated_composite_dbm".into(), json!(rated_dbm));
    m.insert("back_off_db".into(), json!(back_off_db));
    m.insert("allowed_composite_dbm".into(), json!(allowed));
    m.insert("margin_db".into(), json!(margin));
    m.insert("exceeded".into(), json!(margin < 0.0));
    m.insert("verdict".into(), json!(verdict));
    Ok(())
}

/// The geometry and losses between a booster's donor and server antennas.
struct IsolationInput {
    distance_m: f64,
    freq_mhz: f64,
    obstruction_db: f64,
    donor_gain_dbi: f64,
    server_gain_dbi: f64,
    cables_db: f64,
}

/// `calc isolation`: the donor-to-server isolation, the largest stable gain with the
/// margin, and whether a given gain is stable.
fn isolation_json(
    i: &IsolationInput,
    margin_db: f64,
    gain_db: Option<f64>,
) -> Result<Value, String> {
    positive("distance-m", i.distance_m)?;
    positive("freq-mhz", i.freq_mhz)?;
    non_negative("obstruction-db", i.obstruction_db)?;
    non_negative("cables-db", i.cables_db)?;
    finite("donor-gain-dbi", i.donor_gain_dbi)?;
    finite("server-gain-dbi", i.server_gain_dbi)?;
    finite("margin-db", margin_db)?;
    let iso = booster::isolation_db(
        i.distance_m,
        i.freq_mhz,
        i.obstruction_db,
        i.donor_gain_dbi,
        i.server_gain_dbi,
        i.cables_db,
    )
    .map_err(|e| e.to_string())?;
    let max_gain = booster::max_stable_gain_db(iso, margin_db);
    let note = fspl::fspl_range_note(i.freq_mhz, i.distance_m);
    let mut v = json!({"free_space_db": fspl::fspl_db(i.freq_mhz, i.distance_m), "isolation_db": iso,
        "margin_db": margin_db, "max_stable_gain_db": max_gain,
        "extrapolated": note.is_some(), "warning": note.map(|n| n.message()),
        "source": "ITU-R P.525-4 free space + obstruction - gains + cables; margin 15 dB common practice"});
    if let (Some(g), Value::Object(m)) = (gain_db, &mut v) {
        finite("gain-db", g)?;
        m.insert("gain_db".into(), json!(g));
        m.insert("stable".into(), json!(g <= max_gain));
        m.insert("short_by_db".into(), json!((g - max_gain).max(0.0)));
    }
    Ok(v)
}
