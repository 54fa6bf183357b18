//! Signal-booster (bi-directional amplifier) link budget: the uplink noise a booster
//! adds at the serving site's receiver, the downlink level chain from the donor antenna
//! to the server antenna, composite power over several channels, and the isolation
//! between donor and server antennas that bounds the gain.
//!
//! All levels are in dBm, gains and losses in dB (antenna gains in dBi). Powers add in
//! linear units: two noise powers P1 and P2 sum to 10 log10(10^(P1/10) + 10^(P2/10)).

use crate::error::{check_finite, check_non_negative, check_positive, PhysicsError};
use crate::fspl::fspl_db;
use crate::noise::noise_floor_dbm;

/// Isolation the donor-to-server coupling must exceed the booster gain by, dB.
///
/// Common practice: the antenna isolation is kept at least 15 dB above the booster's
/// gain so that the loop through the two antennas stays well below oscillation.
pub const DEFAULT_ISOLATION_MARGIN_DB: f64 = 15.0;

/// Largest acceptable rise of a serving site's uplink noise floor caused by a booster, dB.
///
/// From memory: a commonly quoted planning limit for the noise rise a booster may cause
/// at a donor site is around 1 dB or less.
pub const DEFAULT_MAX_NOISE_RISE_DB: f64 = 1.0;

/// Rise of a receiver's noise floor when noise `delta_n_db` dB relative to that floor
/// is added: R = 10 log10(1 + 10^(ΔN/10)) dB (power sum of two uncorrelated noises;
/// common practice).
///
/// ΔN = −∞ (no added noise) gives 0 dB; ΔN = 0 dB (equal noise) gives 3.0103 dB.
/// NaN gives NaN; the caller validates.
pub fn noise_rise_db(delta_n_db: f64) -> f64 {
    if delta_n_db == f64::NEG_INFINITY {
        return 0.0;
    }
    // ln_1p keeps the accuracy for very small added noise.
    10.0 * (10f64.powf(delta_n_db / 10.0)).ln_1p() / std::f64::consts::LN_10
}

/// Noise a booster puts out at its donor port over `bandwidth_hz`, dBm:
/// N_out = kT0B + NF + G (thermal noise at its input raised by its noise figure and
/// amplified by its gain; kT0 from [`crate::noise`], common practice).
pub fn booster_noise_out_dbm(
    bandwidth_hz: f64,
    noise_figure_db: f64,
    gain_db: f64,
) -> Result<f64, PhysicsError> {
    check_finite("booster gain (dB)", gain_db)?;
    Ok(noise_floor_dbm(bandwidth_hz, noise_figure_db)? + gain_db)
}

/// The booster's noise at the serving receiver's input relative to that receiver's
/// own noise floor, dB: ΔN = (N_out − L) − N_floor (common practice).
///
/// `link_loss_db` is the loss from the booster's donor port to the receiver's input:
/// donor cable + path loss − donor antenna gain − site antenna gain (plus the site's
/// own feeder, if the floor is referred to the antenna), computed by the caller.
/// Bare `f64`: the caller passes finite values.
pub fn noise_delta_at_receiver_db(
    booster_noise_out_dbm: f64,
    link_loss_db: f64,
    receiver_noise_floor_dbm: f64,
) -> f64 {
    booster_noise_out_dbm - link_loss_db - receiver_noise_floor_dbm
}

/// The added noise, relative to the floor, that raises it by `rise_db`:
/// ΔN = 10 log10(10^(R/10) − 1), the inverse of [`noise_rise_db`]. `rise_db` > 0.
fn delta_for_rise_db(rise_db: f64) -> f64 {
    // exp_m1 keeps the accuracy for small rises.
    10.0 * (rise_db / 10.0 * std::f64::consts::LN_10).exp_m1().log10()
}

/// Uplink booster gain at which the serving receiver's noise floor rises by exactly
/// `max_rise_db`, dB: with ΔN = 10 log10(10^(R/10) − 1),
/// G = ΔN + N_floor + L − kT0B − NF (inverse of [`booster_noise_out_dbm`],
/// [`noise_delta_at_receiver_db`] and [`noise_rise_db`]; common practice).
///
/// `max_rise_db` must be finite and greater than 0; `link_loss_db` and
/// `receiver_noise_floor_dbm` finite.
pub fn max_gain_for_noise_rise_db(
    bandwidth_hz: f64,
    noise_figure_db: f64,
    link_loss_db: f64,
    receiver_noise_floor_dbm: f64,
    max_rise_db: f64,
) -> Result<f64, PhysicsError> {
    check_positive("noise rise (dB)", max_rise_db)?;
    check_finite("link loss (dB)", link_loss_db)?;
    check_finite("receiver noise floor (dBm)", receiver_noise_floor_dbm)?;
    let input_noise_dbm = noise_floor_dbm(bandwidth_hz, noise_figure_db)?;
    let delta_db = delta_for_rise_db(max_rise_db);
    Ok(delta_db + receiver_noise_floor_dbm + link_loss_db - input_noise_dbm)
}

/// Checks a channel count is at least 1 and returns 10 log10 N, dB.
fn channels_db(channels: u32) -> Result<f64, PhysicsError> {
    if channels == 0 {
        return Err(PhysicsError::Invalid {
            quantity: "channel count",
            value: 0.0,
            requirement: "must be at least 1",
        });
    }
    Ok(10.0 * f64::from(channels).log10())
}

/// Composite power of `channels` equal carriers of `per_channel_dbm` each, dBm:
/// P_total = P_ch + 10 log10 N (power sum of equal powers; common practice).
pub fn composite_dbm(per_channel_dbm: f64, channels: u32) -> Result<f64, PhysicsError> {
    check_finite("per-channel power (dBm)", per_channel_dbm)?;
    Ok(per_channel_dbm + channels_db(channels)?)
}

/// Per-channel power when `composite_dbm` is shared equally by `channels` carriers,
/// dBm: P_ch = P_total − 10 log10 N (inverse of [`composite_dbm`]; common practice).
pub fn per_channel_dbm(composite_dbm: f64, channels: u32) -> Result<f64, PhysicsError> {
    check_finite("composite power (dBm)", composite_dbm)?;
    Ok(composite_dbm - channels_db(channels)?)
}

/// The downlink level chain of a booster, all per channel: roof level at the donor
/// antenna, through the donor antenna and cable, the booster, the distribution, to the
/// server antenna's radiated power (a plain link budget; common practice).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct DownlinkChain {
    /// Level an isotropic antenna would receive at the donor antenna's place, dBm.
    pub roof_level_dbm: f64,
    /// Donor antenna gain toward the serving site, dBi.
    pub donor_gain_dbi: f64,
    /// Donor cable and connector loss, donor antenna to booster input, dB.
    pub donor_cable_db: f64,
    /// Booster downlink gain, dB.
    pub gain_db: f64,
    /// Splitters, server cable and connectors from the booster output to the server
    /// antenna port, dB.
    pub distribution_db: f64,
    /// Server antenna gain, dBi.
    pub server_gain_dbi: f64,
}

impl DownlinkChain {
    /// Level at the booster input, dBm: roof + donor gain − donor cable.
    pub fn input_dbm(&self) -> f64 {
        self.roof_level_dbm + self.donor_gain_dbi - self.donor_cable_db
    }

    /// Level at the booster output, dBm: input + gain.
    pub fn output_dbm(&self) -> f64 {
        self.input_dbm() + self.gain_db
    }

    /// Level at the server antenna port, dBm: output − distribution.
    pub fn port_dbm(&self) -> f64 {
        self.output_dbm() - self.distribution_db
    }

    /// Radiated power of the server antenna, dBm EIRP: port + server gain.
    pub fn eirp_dbm(&self) -> f64 {
        self.port_dbm() + self.server_gain_dbi
    }
}

/// Downlink gain that brings the roof level to `needed_output_per_channel_dbm` at the
/// booster output, dB: G = P_out − (roof + donor gain − donor cable) (the inverse of
/// [`DownlinkChain::output_dbm`]; common practice). Bare `f64`: the caller passes
/// finite values.
pub fn downlink_gain_db(
    needed_output_per_channel_dbm: f64,
    roof_level_dbm: f64,
    donor_gain_dbi: f64,
    donor_cable_db: f64,
) -> f64 {
    needed_output_per_channel_dbm - (roof_level_dbm + donor_gain_dbi - donor_cable_db)
}

/// Isolation between a booster's donor and server antennas, dB: the free-space loss
/// between them (ITU-R P.525-4) + `obstruction_db` (slabs and walls crossed) − each
/// antenna's gain toward the other + `cables_db` (both antennas' cable losses; common
/// practice).
///
/// `distance_m` and `freq_mhz` must be finite and greater than 0, `obstruction_db` and
/// `cables_db` finite and not below 0, the gains finite. The free-space formula is the
/// far-field one (see [`crate::fspl::fspl_range_note`]).
pub fn isolation_db(
    distance_m: f64,
    freq_mhz: f64,
    obstruction_db: f64,
    donor_gain_toward_dbi: f64,
    server_gain_toward_dbi: f64,
    cables_db: f64,
) -> Result<f64, PhysicsError> {
    check_positive("distance (m)", distance_m)?;
    check_positive("frequency (MHz)", freq_mhz)?;
    check_non_negative("obstruction loss (dB)", obstruction_db)?;
    check_non_negative("cable loss (dB)", cables_db)?;
    check_finite("donor antenna gain (dBi)", donor_gain_toward_dbi)?;
    check_finite("server antenna gain (dBi)", server_gain_toward_dbi)?;
    Ok(fspl_db(freq_mhz, distance_m) + obstruction_db
        - donor_gain_toward_dbi
        - server_gain_toward_dbi
        + cables_db)
}

/// Largest booster gain that keeps `margin_db` below the antenna isolation, dB:
/// G_max = isolation − margin (common practice; see [`DEFAULT_ISOLATION_MARGIN_DB`]).
pub fn max_stable_gain_db(isolation_db: f64, margin_db: f64) -> f64 {
    isolation_db - margin_db
}

/// Change of free-space path loss from `from_mhz` to `to_mhz`, dB: 20 log10(to/from)
/// (the frequency term of ITU-R P.525-4). Adding it moves a path loss measured on the
/// downlink frequency to the uplink frequency. Both frequencies must be finite and
/// greater than 0.
pub fn frequency_offset_db(from_mhz: f64, to_mhz: f64) -> Result<f64, PhysicsError> {
    check_positive("frequency (MHz)", from_mhz)?;
    check_positive("frequency (MHz)", to_mhz)?;
    Ok(20.0 * (to_mhz / from_mhz).log10())
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_abs_diff_eq;

    /// Closed form R = 10 log10(1 + 10^(ΔN/10)), evaluated by hand (power sum, common
    /// practice): ΔN = −∞ → 0; ΔN = 0 → 10 log10 2 = 3.0103; ΔN = −10 → 10 log10 1.1 =
    /// 0.4139.
    #[test]
    fn noise_rise_closed_form() {
        assert_eq!(noise_rise_db(f64::NEG_INFINITY), 0.0);
        assert_abs_diff_eq!(noise_rise_db(0.0), 3.0103, epsilon = 1e-4);
        assert_abs_diff_eq!(noise_rise_db(-10.0), 0.4139, epsilon = 1e-4);
        // 10 dB above the floor: 10 log10 11 = 10.4139 (hand calculation).
        assert_abs_diff_eq!(noise_rise_db(10.0), 10.4139, epsilon = 1e-4);
    }

    /// The gain found for a rise gives that rise back through the forward chain
    /// (N_out = kT0B + NF + G, ΔN = N_out − L − N_floor, R(ΔN)): an inversion check of
    /// the formulas above (derivation consistency).
    #[test]
    fn max_gain_inverts_noise_rise() {
        for &(bw, nf, loss, floor, rise) in &[
            (5e6, 5.0, 100.0, -101.0, 1.0),
            (200e3, 8.0, 85.0, -118.0, 0.1),
            (20e6, 3.0, 120.0, -95.0, 3.0),
            (12.5e3, 7.0, 70.0, -126.0, 0.01),
        ] {
            let g = max_gain_for_noise_rise_db(bw, nf, loss, floor, rise).unwrap();
            let out = booster_noise_out_dbm(bw, nf, g).unwrap();
            let back = noise_rise_db(noise_delta_at_receiver_db(out, loss, floor));
            assert_abs_diff_eq!(back, rise, epsilon = 1e-9);
        }
    }

    /// Hand calculation: 5 MHz, NF 5 dB, L 100 dB, floor −101 dBm, 1 dB rise.
    /// kT0 = −173.9752 dBm/Hz (noise.rs, SI constants); kT0B = −173.9752 + 66.9897 =
    /// −106.9855 dBm; ΔN = 10 log10(10^0.1 − 1) = 10 log10(0.258925) = −5.8683 dB;
    /// G = −5.8683 − 101 + 100 + 106.9855 − 5 = 95.1172 dB.
    #[test]
    fn max_gain_hand_calculation() {
        let g = max_gain_for_noise_rise_db(5e6, 5.0, 100.0, -101.0, 1.0).unwrap();
        assert_abs_diff_eq!(g, 95.1172, epsilon = 1e-3);
        // Same numbers forward with G = 50 dB: N_out = −106.9855 + 5 + 50 = −51.9855 dBm.
        assert_abs_diff_eq!(
            booster_noise_out_dbm(5e6, 5.0, 50.0).unwrap(),
            -51.9855,
            epsilon = 1e-3
        );
        assert!(max_gain_for_noise_rise_db(5e6, 5.0, 100.0, -101.0, 0.0).is_err());
        assert!(max_gain_for_noise_rise_db(5e6, 5.0, f64::NAN, -101.0, 1.0).is_err());
        assert!(booster_noise_out_dbm(0.0, 5.0, 50.0).is_err());
    }

    /// Hand calculation of a downlink chain (plain link budget, common practice):
    /// roof −60 dBm, donor 10 dBi, donor cable 3.5 dB → input −60 + 10 − 3.5 = −53.5 dBm;
    /// gain 60 dB → output 6.5 dBm; distribution 12.3 dB → port −5.8 dBm;
    /// server 2 dBi → EIRP −3.8 dBm.
    #[test]
    fn downlink_chain_hand_calculation() {
        let c = DownlinkChain {
            roof_level_dbm: -60.0,
            donor_gain_dbi: 10.0,
            donor_cable_db: 3.5,
            gain_db: 60.0,
            distribution_db: 12.3,
            server_gain_dbi: 2.0,
        };
        assert_abs_diff_eq!(c.input_dbm(), -53.5, epsilon = 0.01);
        assert_abs_diff_eq!(c.output_dbm(), 6.5, epsilon = 0.01);
        assert_abs_diff_eq!(c.port_dbm(), -5.8, epsilon = 0.01);
        assert_abs_diff_eq!(c.eirp_dbm(), -3.8, epsilon = 0.01);
        // The gain for 6.5 dBm out from the same roof: 6.5 − (−53.5) = 60 dB.
        assert_abs_diff_eq!(
            downlink_gain_db(6.5, -60.0, 10.0, 3.5),
            60.0,
            epsilon = 1e-9
        );
    }

    /// Two antennas 20 m apart across a slab at 770 MHz. ITU-R P.525-4:
    /// L = 32.4478 + 20 log10 f(MHz) + 20 log10 d(km) (constant with exact c; P.525
    /// prints it rounded) = 32.4478 + 57.7298 − 33.9794 = 56.1982 dB. With a 20 dB slab,
    /// the donor's back lobe −15 dBi toward the server, the server 0 dBi toward the donor
    /// and 5 dB of cables: 56.1982 + 20 + 15 − 0 + 5 = 96.1982 dB (hand calculation).
    /// Max stable gain with the 15 dB margin: 81.1982 dB.
    #[test]
    fn isolation_across_a_slab() {
        let iso = isolation_db(20.0, 770.0, 20.0, -15.0, 0.0, 5.0).unwrap();
        assert_abs_diff_eq!(iso, 96.1982, epsilon = 0.01);
        assert_abs_diff_eq!(
            max_stable_gain_db(iso, DEFAULT_ISOLATION_MARGIN_DB),
            81.1982,
            epsilon = 0.01
        );
        assert!(isolation_db(0.0, 770.0, 0.0, 0.0, 0.0, 0.0).is_err());
        assert!(isolation_db(-2.0, 770.0, 0.0, 0.0, 0.0, 0.0).is_err());
        assert!(isolation_db(20.0, 770.0, -1.0, 0.0, 0.0, 0.0).is_err());
    }

    /// Power sum of N equal carriers, 10 log10 N (common practice): 10 log10 4 = 6.0206.
    #[test]
    fn composite_of_four_channels() {
        assert_abs_diff_eq!(composite_dbm(10.0, 4).unwrap(), 16.0206, epsilon = 1e-4);
        assert_abs_diff_eq!(per_channel_dbm(16.0206, 4).unwrap(), 10.0, epsilon = 1e-4);
        assert_abs_diff_eq!(composite_dbm(-3.0, 1).unwrap(), -3.0, epsilon = 1e-12);
        assert!(composite_dbm(10.0, 0).is_err());
        assert!(per_channel_dbm(10.0, 0).is_err());
    }

    /// Frequency term of ITU-R P.525-4: 20 log10(1800/900) = 6.0206 dB; 20 log10(791/832)
    /// = −0.4389 dB (hand calculation).
    #[test]
    fn frequency_offset_follows_p525() {
        assert_abs_diff_eq!(
            frequency_offset_db(900.0, 1800.0).unwrap(),
            6.0206,
            epsilon = 1e-4
        );
        assert_abs_diff_eq!(
            frequency_offset_db(832.0, 791.0).unwrap(),
            -0.4389,
            epsilon = 1e-4
        );
        assert_abs_diff_eq!(
            frequency_offset_db(832.0, 791.0).unwrap(),
            fspl_db(791.0, 50.0) - fspl_db(832.0, 50.0),
            epsilon = 1e-12
        );
        assert!(frequency_offset_db(0.0, 900.0).is_err());
    }
}
