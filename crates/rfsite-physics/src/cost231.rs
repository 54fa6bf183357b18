//! Multi-wall indoor models: COST 231 (final report, 1999, §4.7) and Motley–Keenan.
//!
//! `L = L_FS + L_c + sum_i k_wi L_wi + n^((n+2)/(n+1) - b) L_f`. The empirical floor
//! term makes each extra floor cost less than the one before. The simpler
//! Motley–Keenan form adds `n L_f` linearly and has no constant.
//!
//! These functions only add numbers: the caller supplies the free-space loss, the loss
//! of each wall crossed (repeat a wall type once per crossing) and the floor loss.
//! The models carry no validity range of their own: their range is that of the wall
//! and floor losses the caller fitted or chose (typically one frequency band).

/// Empirical floor-term exponent b of COST 231 §4.7 (typical fitted value near 1.8 GHz;
/// the value is consistent across secondary sources, its frequency attribution is from
/// memory).
pub const COST231_DEFAULT_B: f64 = 0.46;

/// Typical COST 231 light-wall loss near 1.8 GHz, dB (consistent; frequency from memory).
pub const COST231_LIGHT_WALL_DB: f64 = 3.4;
/// Typical COST 231 heavy-wall loss near 1.8 GHz, dB (consistent; frequency from memory).
pub const COST231_HEAVY_WALL_DB: f64 = 6.9;
/// Typical COST 231 floor loss near 1.8 GHz, dB (consistent; frequency from memory).
pub const COST231_FLOOR_DB: f64 = 18.3;

/// COST 231 floor term `n^((n+2)/(n+1) - b) L_f` in dB; 0 for `n_floors = 0`.
pub fn floor_term_db(n_floors: u32, floor_loss_db: f64, b: f64) -> f64 {
    if n_floors == 0 {
        return 0.0;
    }
    let n = f64::from(n_floors);
    n.powf((n + 2.0) / (n + 1.0) - b) * floor_loss_db
}

/// COST 231 multi-wall loss in dB: free-space loss + constant `L_c` + the sum of the
/// wall losses crossed + [`floor_term_db`].
pub fn multiwall_loss_db(
    fspl_db: f64,
    constant_lc_db: f64,
    wall_losses_db: &[f64],
    n_floors: u32,
    floor_loss_db: f64,
    b: f64,
) -> f64 {
    fspl_db
        + constant_lc_db
        + wall_losses_db.iter().sum::<f64>()
        + floor_term_db(n_floors, floor_loss_db, b)
}

/// Motley–Keenan loss in dB: free-space loss + the wall losses crossed + `n L_f`.
pub fn motley_keenan_loss_db(
    fspl_db: f64,
    wall_losses_db: &[f64],
    n_floors: u32,
    floor_loss_db: f64,
) -> f64 {
    fspl_db + wall_losses_db.iter().sum::<f64>() + f64::from(n_floors) * floor_loss_db
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_abs_diff_eq;

    #[test]
    fn floor_term_values() {
        // L_f = 18.3 dB, b = 0.46: 18.30, 33.52, 43.59 dB for 1, 2, 3 floors (computed
        // from the COST 231 final report §4.7 formula).
        assert_eq!(floor_term_db(0, 18.3, 0.46), 0.0);
        assert_abs_diff_eq!(
            floor_term_db(1, 18.3, COST231_DEFAULT_B),
            18.30,
            epsilon = 0.005
        );
        assert_abs_diff_eq!(
            floor_term_db(2, 18.3, COST231_DEFAULT_B),
            33.52,
            epsilon = 0.005
        );
        assert_abs_diff_eq!(
            floor_term_db(3, 18.3, COST231_DEFAULT_B),
            43.59,
            epsilon = 0.005
        );
    }

    #[test]
    fn sums() {
        // Plain addition of the terms (computed).
        let walls = [
            COST231_LIGHT_WALL_DB,
            COST231_LIGHT_WALL_DB,
            COST231_HEAVY_WALL_DB,
        ];
        let l = multiwall_loss_db(60.0, 1.0, &walls, 1, COST231_FLOOR_DB, COST231_DEFAULT_B);
        assert_abs_diff_eq!(l, 60.0 + 1.0 + 13.7 + 18.3, epsilon = 1e-9);
        let mk = motley_keenan_loss_db(60.0, &walls, 2, 18.3);
        assert_abs_diff_eq!(mk, 60.0 + 13.7 + 36.6, epsilon = 1e-9);
        assert_eq!(motley_keenan_loss_db(60.0, &[], 0, 18.3), 60.0);
    }
}
