//! Building materials and wall reflection/transmission — ITU-R P.2040-3.
//!
//! Table 3 of P.2040 (editions -1 to -4 share it) fits each material's relative
//! permittivity and conductivity as `eta' = a f^b`, `sigma = c f^d` (f in GHz,
//! sigma in S/m). The complex relative permittivity is `eta = eta' - j 17.98 sigma / f`
//! (time convention `e^{+j omega t}`; a lossy medium has a negative imaginary part).
//!
//! On top of the table this module gives the air–material interface reflection
//! coefficients (P.2040 §2), the single slab with all internal reflections (P.2040 §3)
//! and a multi-layer wall (plasterboard / cavity / plasterboard, multi-pane glazing
//! with a metallised coating) by the same physics.
//!
//! Sign convention (the one P.2040 writes): at normal incidence `R_TM = -R_TE`.
//! `R_TE` is the ratio of reflected to incident electric field; `R_TM` is the one of the
//! tangential magnetic field. With the same medium (air) on both sides of a wall,
//! `|R|^2` and `|T|^2` are power fractions in both polarisations.
//!
//! The 2013 first edition had other numbers (concrete 5.31 / 0.0326 / 0.8095); do not
//! mix them in. Metal is 1e7 S/m in Table 3.

use num_complex::Complex64;

use crate::validity::{check_range, RangeNote};

/// Polarisation of the incident wave relative to the plane of incidence.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Polarization {
    /// Electric field perpendicular to the plane of incidence ("s", horizontal on a
    /// vertical wall for a horizontal path).
    Te,
    /// Magnetic field perpendicular to the plane of incidence ("p").
    Tm,
}

/// One row of ITU-R P.2040-3 Table 3.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ItuMaterial {
    /// Kebab-case identifier used in project files, e.g. `"ceiling-board"`.
    pub id: &'static str,
    /// Name as printed in the table, e.g. `"Ceiling board"`.
    pub name: &'static str,
    /// Real permittivity coefficient a in `eta' = a f^b`.
    pub a: f64,
    /// Real permittivity exponent b.
    pub b: f64,
    /// Conductivity coefficient c in `sigma = c f^d` (S/m).
    pub c: f64,
    /// Conductivity exponent d.
    pub d: f64,
    /// Lowest frequency of the fitted range (GHz).
    pub f_min_ghz: f64,
    /// Highest frequency of the fitted range (GHz).
    pub f_max_ghz: f64,
    /// True when P.2040 states the range as a hard limit (the ground types): outside it
    /// the fit is not merely less accurate but not to be used.
    pub hard_limit: bool,
}

const fn row(
    id: &'static str,
    name: &'static str,
    abcd: [f64; 4],
    f_min_ghz: f64,
    f_max_ghz: f64,
    hard_limit: bool,
) -> ItuMaterial {
    ItuMaterial {
        id,
        name,
        a: abcd[0],
        b: abcd[1],
        c: abcd[2],
        d: abcd[3],
        f_min_ghz,
        f_max_ghz,
        hard_limit,
    }
}

/// All rows of ITU-R P.2040-3 Table 3 (confirmed in the standard), in table order.
pub const ITU_MATERIALS: &[ItuMaterial] = &[
    row(
        "concrete",
        "Concrete",
        [5.24, 0.0, 0.0462, 0.7822],
        1.0,
        100.0,
        false,
    ),
    row(
        "brick",
        "Brick",
        [3.91, 0.0, 0.0238, 0.16],
        1.0,
        40.0,
        false,
    ),
    row(
        "plasterboard",
        "Plasterboard",
        [2.73, 0.0, 0.0085, 0.9395],
        1.0,
        100.0,
        false,
    ),
    row(
        "wood",
        "Wood",
        [1.99, 0.0, 0.0047, 1.0718],
        0.001,
        100.0,
        false,
    ),
    row(
        "glass",
        "Glass",
        [6.31, 0.0, 0.0036, 1.3394],
        0.1,
        100.0,
        false,
    ),
    row(
        "ceiling-board",
        "Ceiling board",
        [1.48, 0.0, 0.0011, 1.0750],
        1.0,
        100.0,
        false,
    ),
    row(
        "chipboard",
        "Chipboard",
        [2.58, 0.0, 0.0217, 0.7800],
        1.0,
        100.0,
        false,
    ),
    row(
        "plywood",
        "Plywood",
        [2.71, 0.0, 0.33, 0.0],
        1.0,
        40.0,
        false,
    ),
    row(
        "marble",
        "Marble",
        [7.074, 0.0, 0.0055, 0.9262],
        1.0,
        60.0,
        false,
    ),
    row(
        "floorboard",
        "Floorboard",
        [3.66, 0.0, 0.0044, 1.3515],
        50.0,
        100.0,
        false,
    ),
    row("metal", "Metal", [1.0, 0.0, 1e7, 0.0], 1.0, 100.0, false),
    row(
        "very-dry-ground",
        "Very dry ground",
        [3.0, 0.0, 0.00015, 2.52],
        1.0,
        10.0,
        true,
    ),
    row(
        "medium-dry-ground",
        "Medium dry ground",
        [15.0, -0.1, 0.035, 1.63],
        1.0,
        10.0,
        true,
    ),
    row(
        "wet-ground",
        "Wet ground",
        [30.0, -0.4, 0.15, 1.30],
        1.0,
        10.0,
        true,
    ),
];

/// Looks a Table 3 row up by its kebab-case id (`"concrete"`, `"wet-ground"`, ...).
pub fn material(id: &str) -> Option<&'static ItuMaterial> {
    ITU_MATERIALS.iter().find(|m| m.id == id)
}

/// Static label used as [`RangeNote::model`] for a material.
fn model_label(id: &str) -> &'static str {
    match id {
        "concrete" => "ITU-R P.2040-3 concrete",
        "brick" => "ITU-R P.2040-3 brick",
        "plasterboard" => "ITU-R P.2040-3 plasterboard",
        "wood" => "ITU-R P.2040-3 wood",
        "glass" => "ITU-R P.2040-3 glass",
        "ceiling-board" => "ITU-R P.2040-3 ceiling board",
        "chipboard" => "ITU-R P.2040-3 chipboard",
        "plywood" => "ITU-R P.2040-3 plywood",
        "marble" => "ITU-R P.2040-3 marble",
        "floorboard" => "ITU-R P.2040-3 floorboard",
        "metal" => "ITU-R P.2040-3 metal",
        "very-dry-ground" => "ITU-R P.2040-3 very dry ground (hard limit: not valid outside)",
        "medium-dry-ground" => "ITU-R P.2040-3 medium dry ground (hard limit: not valid outside)",
        "wet-ground" => "ITU-R P.2040-3 wet ground (hard limit: not valid outside)",
        _ => "ITU-R P.2040-3 material fit",
    }
}

impl ItuMaterial {
    /// Real relative permittivity `eta' = a f^b` at `freq_ghz`.
    /// The caller guarantees `freq_ghz > 0`; use [`ItuMaterial::range_note`] to learn
    /// whether the frequency is inside the fitted range.
    pub fn permittivity_real(&self, freq_ghz: f64) -> f64 {
        self.a * freq_ghz.powf(self.b)
    }

    /// Conductivity `sigma = c f^d` in S/m at `freq_ghz` (caller guarantees `freq_ghz > 0`).
    pub fn conductivity_s_per_m(&self, freq_ghz: f64) -> f64 {
        self.c * freq_ghz.powf(self.d)
    }

    /// Complex relative permittivity `eta' - j 17.98 sigma / f` at `freq_ghz`
    /// (caller guarantees `freq_ghz > 0`).
    pub fn complex_permittivity(&self, freq_ghz: f64) -> Complex64 {
        complex_permittivity(
            self.permittivity_real(freq_ghz),
            self.conductivity_s_per_m(freq_ghz),
            freq_ghz,
        )
    }

    /// `Some` when `freq_ghz` is outside the row's fitted range (the values returned by
    /// the other methods are then extrapolated; for ground types, which have a hard
    /// limit, the note's model label says they are not valid).
    pub fn range_note(&self, freq_ghz: f64) -> Option<RangeNote> {
        check_range(
            model_label(self.id),
            "frequency",
            freq_ghz,
            self.f_min_ghz,
            self.f_max_ghz,
            "GHz",
        )
    }

    /// A homogeneous slab of this material, `thickness_m` thick: see [`slab`].
    /// Returns the response together with the range note for `freq_ghz`.
    pub fn slab(
        &self,
        thickness_m: f64,
        freq_ghz: f64,
        theta_rad: f64,
        pol: Polarization,
    ) -> (SlabResponse, Option<RangeNote>) {
        let eta = self.complex_permittivity(freq_ghz);
        (
            slab(eta, thickness_m, freq_ghz, theta_rad, pol),
            self.range_note(freq_ghz),
        )
    }
}

/// Complex relative permittivity from its real part and conductivity:
/// `eta = eta' - j 17.98 sigma / f` (ITU-R P.2040-3 §2; 17.98 = 1 / (2 pi eps0 1e9)
/// rounded as P.2040 prints it). The caller guarantees `freq_ghz > 0`.
pub fn complex_permittivity(eps_real: f64, sigma_s_per_m: f64, freq_ghz: f64) -> Complex64 {
    Complex64::new(eps_real, -17.98 * sigma_s_per_m / freq_ghz)
}

/// Relative permittivity of air (vacuum), for cavities in [`layered`] walls.
pub const AIR: Complex64 = Complex64::new(1.0, 0.0);

/// `sqrt(eta - sin^2 theta)` on the branch with a non-positive imaginary part, so that
/// `e^{-j k d sqrt(...)}` decays through a lossy (or evanescent) layer.
fn normal_root(eta: Complex64, sin2: f64) -> Complex64 {
    let s = (eta - sin2).sqrt();
    if s.im > 0.0 {
        -s
    } else {
        s
    }
}

/// The "normal admittance" p of a medium: the interface reflection is
/// `(p_air - p) / (p_air + p)` in both polarisations (TE: `p = sqrt(eta - sin^2)`,
/// TM: `p = sqrt(eta - sin^2) / eta`).
fn admittance(eta: Complex64, sin2: f64, pol: Polarization) -> Complex64 {
    let s = normal_root(eta, sin2);
    match pol {
        Polarization::Te => s,
        Polarization::Tm => s / eta,
    }
}

/// Incidence geometry folded into `[0, pi/2]`: returns (cos theta >= 0, sin^2 theta).
fn incidence(theta_rad: f64) -> (f64, f64) {
    let cos = theta_rad.cos().abs();
    let sin = theta_rad.sin();
    (cos, sin * sin)
}

/// Reflection coefficient of the interface air → medium of complex relative
/// permittivity `eta`, at incidence angle `theta_rad` from the normal
/// (ITU-R P.2040-3 §2):
///
/// `R_TE = (cos t - sqrt(eta - sin^2 t)) / (cos t + sqrt(eta - sin^2 t))`,
/// `R_TM = (eta cos t - sqrt(eta - sin^2 t)) / (eta cos t + sqrt(eta - sin^2 t))`.
///
/// Angles outside `[0, pi/2]` are folded back by symmetry (only `|cos t|` and
/// `sin^2 t` enter). NaN in gives NaN out.
pub fn interface_reflection(eta: Complex64, theta_rad: f64, pol: Polarization) -> Complex64 {
    let (cos, sin2) = incidence(theta_rad);
    let s = normal_root(eta, sin2);
    match pol {
        Polarization::Te => (cos - s) / (cos + s),
        Polarization::Tm => (eta * cos - s) / (eta * cos + s),
    }
}

/// Amplitude reflection and transmission coefficients of a wall with air on both sides.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SlabResponse {
    /// Reflection coefficient (air side, referred to the front face).
    pub reflection: Complex64,
    /// Transmission coefficient (referred to the back face; with air on both sides
    /// `|T|^2` is the transmitted power fraction).
    pub transmission: Complex64,
}

impl SlabResponse {
    /// Transmission loss `-20 log10 |T|` in dB (infinite for an opaque wall).
    pub fn transmission_loss_db(&self) -> f64 {
        -20.0 * self.transmission.norm().log10()
    }

    /// Reflection loss `-20 log10 |R|` in dB (0 dB for a perfect reflector).
    pub fn reflection_loss_db(&self) -> f64 {
        -20.0 * self.reflection.norm().log10()
    }

    /// Fraction of the incident power absorbed in the wall, `1 - |R|^2 - |T|^2`.
    pub fn absorbed_fraction(&self) -> f64 {
        1.0 - self.reflection.norm_sqr() - self.transmission.norm_sqr()
    }
}

/// A single homogeneous slab of complex relative permittivity `eta`, `thickness_m`
/// thick, in air, with all internal reflections (ITU-R P.2040-3 §3):
///
/// `q = (2 pi d / lambda) sqrt(eta - sin^2 t)`,
/// `R = R'(1 - e^{-j2q}) / (1 - R'^2 e^{-j2q})`,
/// `T = (1 - R'^2) e^{-jq} / (1 - R'^2 e^{-j2q})`, R' from [`interface_reflection`].
///
/// The caller guarantees `freq_ghz > 0` and `thickness_m >= 0` (0 m gives R = 0,
/// T = 1). An opaque slab (thick metal) gives T = 0, i.e. an infinite loss, never NaN.
pub fn slab(
    eta: Complex64,
    thickness_m: f64,
    freq_ghz: f64,
    theta_rad: f64,
    pol: Polarization,
) -> SlabResponse {
    if thickness_m == 0.0 {
        // No wall; also avoids 0/0 at exactly grazing incidence.
        return SlabResponse {
            reflection: Complex64::new(0.0, 0.0),
            transmission: Complex64::new(1.0, 0.0),
        };
    }
    let (_, sin2) = incidence(theta_rad);
    let r1 = interface_reflection(eta, theta_rad, pol);
    let k0 = 2.0 * std::f64::consts::PI * freq_ghz * 1e9 / crate::fspl::SPEED_OF_LIGHT_M_PER_S;
    let q = k0 * thickness_m * normal_root(eta, sin2);
    let j = Complex64::i();
    let e1 = (-j * q).exp();
    let e2 = e1 * e1;
    let r2 = r1 * r1;
    let denom = 1.0 - r2 * e2;
    SlabResponse {
        reflection: r1 * (1.0 - e2) / denom,
        transmission: (1.0 - r2) * e1 / denom,
    }
}

/// One layer of a multi-layer wall.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Layer {
    /// Complex relative permittivity (use [`AIR`] for a cavity).
    pub eta: Complex64,
    /// Thickness in metres.
    pub thickness_m: f64,
}

/// A multi-layer wall with air on both sides (layers listed from the incidence side).
///
/// This is the transfer-matrix solution of the stack, evaluated in its equivalent
/// recursive form (Rouard's method: the stack's reflection is built up from the back
/// face, one layer at a time). That form only ever uses decaying exponentials, so a
/// thick metal layer gives T = 0 instead of overflowing. For one layer it equals
/// [`slab`]; for no layers it returns R = 0, T = 1.
///
/// The caller guarantees `freq_ghz > 0` and thicknesses `>= 0`.
pub fn layered(layers: &[Layer], freq_ghz: f64, theta_rad: f64, pol: Polarization) -> SlabResponse {
    let (_, sin2) = incidence(theta_rad);
    let k0 = 2.0 * std::f64::consts::PI * freq_ghz * 1e9 / crate::fspl::SPEED_OF_LIGHT_M_PER_S;
    let j = Complex64::i();
    let p_air = admittance(AIR, sin2, pol);
    // Interface coefficient between media of admittance pa (incidence side) and pb.
    // The transmission of the continuous tangential field is 1 + r.
    let r_ab = |pa: Complex64, pb: Complex64| (pa - pb) / (pa + pb);

    // Walk from the back face (last layer -> air) to the front face.
    let mut p_next = p_air;
    let mut big_r = Complex64::new(0.0, 0.0); // reflection seen from the back air: none
    let mut big_t = Complex64::new(1.0, 0.0);
    let mut phase_next = Complex64::new(1.0, 0.0); // e^{-j delta} of the medium behind
    for layer in layers.iter().rev() {
        let p = admittance(layer.eta, sin2, pol);
        let r = r_ab(p, p_next);
        let prop2 = phase_next * phase_next;
        let denom = 1.0 + r * big_r * prop2;
        let new_r = (r + big_r * prop2) / denom;
        let new_t = (1.0 + r) * big_t * phase_next / denom;
        big_r = new_r;
        big_t = new_t;
        p_next = p;
        phase_next = (-j * k0 * layer.thickness_m * normal_root(layer.eta, sin2)).exp();
    }
    // Front interface air -> first layer (or air -> air when there are no layers).
    let r = r_ab(p_air, p_next);
    let prop2 = phase_next * phase_next;
    let denom = 1.0 + r * big_r * prop2;
    let reflection = (r + big_r * prop2) / denom;
    let transmission = (1.0 + r) * big_t * phase_next / denom;
    // The recursion carries the tangential field U; for TM that is H, which is what
    // P.2040's R_TM describes, and with air on both sides |T| is the same for E and H.
    SlabResponse {
        reflection,
        transmission,
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_abs_diff_eq;
    use std::f64::consts::PI;

    fn m(id: &str) -> &'static ItuMaterial {
        material(id).expect("material in Table 3")
    }

    #[test]
    fn every_table_row_is_reachable_by_id() {
        // ITU-R P.2040-3 Table 3 has 14 rows including the three ground types.
        assert_eq!(ITU_MATERIALS.len(), 14);
        for row in ITU_MATERIALS {
            assert_eq!(material(row.id), Some(row));
        }
        assert!(material("Concrete").is_none());
        assert!(material("unobtainium").is_none());
    }

    #[test]
    fn table_values_at_1_ghz_are_the_coefficients() {
        // ITU-R P.2040-3 Table 3: at f = 1 GHz, eta' = a and sigma = c exactly.
        assert_eq!(m("concrete").permittivity_real(1.0), 5.24);
        assert_eq!(m("concrete").conductivity_s_per_m(1.0), 0.0462);
        assert_eq!(m("glass").permittivity_real(1.0), 6.31);
        assert_eq!(m("glass").conductivity_s_per_m(1.0), 0.0036);
        assert_eq!(m("plywood").conductivity_s_per_m(1.0), 0.33);
        assert_eq!(m("metal").conductivity_s_per_m(1.0), 1e7);
        assert_eq!(m("wet-ground").permittivity_real(1.0), 30.0);
    }

    #[test]
    fn table_values_at_other_frequencies() {
        // Computed from ITU-R P.2040-3 Table 3 (eta' = a f^b, sigma = c f^d).
        assert_abs_diff_eq!(
            m("concrete").conductivity_s_per_m(10.0),
            0.279_796,
            epsilon = 1e-6
        );
        assert_abs_diff_eq!(
            m("concrete").conductivity_s_per_m(2.4),
            0.091_631,
            epsilon = 1e-6
        );
        assert_abs_diff_eq!(
            m("plasterboard").conductivity_s_per_m(5.0),
            0.038_557,
            epsilon = 1e-6
        );
        assert_abs_diff_eq!(
            m("wood").conductivity_s_per_m(0.9),
            0.004_198_1,
            epsilon = 1e-7
        );
        assert_abs_diff_eq!(
            m("brick").conductivity_s_per_m(28.0),
            0.040_562,
            epsilon = 1e-6
        );
        // Ground types vary their permittivity too (b != 0).
        assert_abs_diff_eq!(
            m("medium-dry-ground").permittivity_real(5.0),
            12.770_10,
            epsilon = 1e-5
        );
        assert_abs_diff_eq!(
            m("wet-ground").permittivity_real(2.0),
            22.735_75,
            epsilon = 1e-5
        );
        assert_abs_diff_eq!(
            m("medium-dry-ground").conductivity_s_per_m(5.0),
            0.482_380,
            epsilon = 1e-6
        );
        // eta'' = 17.98 sigma / f: concrete at 2.4 GHz (computed).
        let eta = m("concrete").complex_permittivity(2.4);
        assert_abs_diff_eq!(eta.re, 5.24, epsilon = 1e-12);
        assert_abs_diff_eq!(eta.im, -17.98 * 0.091_631 / 2.4, epsilon = 1e-5);
    }

    #[test]
    fn range_notes_follow_the_table() {
        // Fitted ranges from ITU-R P.2040-3 Table 3.
        assert!(m("concrete").range_note(0.8).is_some());
        assert!(m("concrete").range_note(1.0).is_none());
        assert!(m("wood").range_note(0.9).is_none());
        assert!(m("glass").range_note(0.9).is_none());
        assert!(m("floorboard").range_note(2.4).is_some());
        let note = m("medium-dry-ground").range_note(0.9).expect("below 1 GHz");
        assert!(note.message().contains("hard limit"));
        assert_eq!(
            m("concrete").range_note(0.8).map(|n| n.message()).as_deref(),
            Some("ITU-R P.2040-3 concrete: frequency 0.8 GHz is outside the fitted range 1–100 GHz (extrapolated)")
        );
    }

    #[test]
    fn normal_incidence_te_is_minus_tm() {
        // ITU-R P.2040-3 §2 formulas at theta = 0: R_TM = (eta - sqrt eta)/(eta + sqrt eta)
        // = -R_TE (computed from the formulas).
        for id in ["concrete", "glass", "brick", "wet-ground", "metal"] {
            let eta = m(id).complex_permittivity(2.4);
            let te = interface_reflection(eta, 0.0, Polarization::Te);
            let tm = interface_reflection(eta, 0.0, Polarization::Tm);
            assert_abs_diff_eq!((te + tm).norm(), 0.0, epsilon = 1e-12);
        }
        // Lossless eta = 4: R_TE = (1 - 2)/(1 + 2) = -1/3 (computed).
        let te = interface_reflection(Complex64::new(4.0, 0.0), 0.0, Polarization::Te);
        assert_abs_diff_eq!(te.re, -1.0 / 3.0, epsilon = 1e-15);
        assert_abs_diff_eq!(te.im, 0.0, epsilon = 1e-15);
    }

    #[test]
    fn grazing_incidence_reflects_fully() {
        // At theta -> 90 deg both coefficients tend to -1 (computed from P.2040 §2).
        let eta = m("concrete").complex_permittivity(2.4);
        for pol in [Polarization::Te, Polarization::Tm] {
            let r = interface_reflection(eta, PI / 2.0, pol);
            assert_abs_diff_eq!(r.re, -1.0, epsilon = 1e-12);
        }
    }

    #[test]
    fn brewster_angle_for_glass() {
        // For low-loss glass |R_TM| has its minimum near atan(sqrt(eta')) (Brewster,
        // textbook optics; common practice). Glass at 1 GHz: eta' = 6.31 -> 68.30 deg.
        let eta = m("glass").complex_permittivity(1.0);
        let mut best = (0.0_f64, f64::INFINITY);
        for i in 0..9000 {
            let theta_deg = i as f64 * 0.01;
            let r = interface_reflection(eta, theta_deg.to_radians(), Polarization::Tm).norm();
            if r < best.1 {
                best = (theta_deg, r);
            }
        }
        let brewster_deg = 6.31_f64.sqrt().atan().to_degrees();
        assert_abs_diff_eq!(best.0, brewster_deg, epsilon = 0.05);
        assert!(best.1 < 0.01, "|R_TM| at Brewster = {}", best.1);
        // TE has no such minimum: it grows monotonically (common practice).
        let te_30 = interface_reflection(eta, 30f64.to_radians(), Polarization::Te).norm();
        let te_60 = interface_reflection(eta, 60f64.to_radians(), Polarization::Te).norm();
        assert!(te_60 > te_30);
    }

    #[test]
    fn concrete_200mm_at_2_4_ghz() {
        // Concrete 200 mm, 2.4 GHz, normal incidence: transmission loss 14.575 dB,
        // |R| = 0.404 (computed from ITU-R P.2040-3 §3; tmm gives the same).
        let (wall, note) = m("concrete").slab(0.2, 2.4, 0.0, Polarization::Te);
        assert!(note.is_none());
        assert_abs_diff_eq!(wall.transmission_loss_db(), 14.575, epsilon = 5e-4);
        assert_abs_diff_eq!(wall.reflection.norm(), 0.404, epsilon = 5e-4);
        // Normal incidence: TE and TM give the same magnitudes (computed).
        let tm = slab(
            m("concrete").complex_permittivity(2.4),
            0.2,
            2.4,
            0.0,
            Polarization::Tm,
        );
        assert_abs_diff_eq!(tm.transmission_loss_db(), 14.575, epsilon = 5e-4);
    }

    #[test]
    fn lossless_slab_conserves_energy() {
        // |R|^2 + |T|^2 = 1 for a lossless slab (computed; energy conservation).
        for pol in [Polarization::Te, Polarization::Tm] {
            for theta_deg in [0.0, 20.0, 45.0, 70.0, 89.0] {
                let r = slab(
                    Complex64::new(6.0, 0.0),
                    0.013,
                    2.4,
                    f64::to_radians(theta_deg),
                    pol,
                );
                assert_abs_diff_eq!(r.absorbed_fraction(), 0.0, epsilon = 1e-12);
            }
        }
    }

    #[test]
    fn half_wave_slab_is_transparent() {
        // A lossless slab of optical thickness lambda/2 at normal incidence has R = 0
        // (computed; textbook thin-film result).
        let eta = Complex64::new(4.0, 0.0);
        let lambda_in_m = crate::fspl::wavelength_m(2400.0) / 2.0;
        let r = slab(eta, lambda_in_m / 2.0, 2.4, 0.0, Polarization::Te);
        assert_abs_diff_eq!(r.reflection.norm(), 0.0, epsilon = 1e-12);
        assert_abs_diff_eq!(r.transmission.norm(), 1.0, epsilon = 1e-12);
    }

    #[test]
    fn layered_single_layer_equals_slab() {
        // The multi-layer solution with one layer must reproduce P.2040 §3 (computed).
        for id in [
            "concrete",
            "glass",
            "plasterboard",
            "wood",
            "metal",
            "wet-ground",
        ] {
            for f in [0.9, 2.4, 5.0, 28.0] {
                for theta_deg in [0.0, 30.0, 60.0, 85.0] {
                    for pol in [Polarization::Te, Polarization::Tm] {
                        let eta = m(id).complex_permittivity(f);
                        let th = f64::to_radians(theta_deg);
                        let d = if id == "metal" { 1e-6 } else { 0.05 };
                        let a = slab(eta, d, f, th, pol);
                        let b = layered(
                            &[Layer {
                                eta,
                                thickness_m: d,
                            }],
                            f,
                            th,
                            pol,
                        );
                        assert_abs_diff_eq!(
                            (a.reflection - b.reflection).norm(),
                            0.0,
                            epsilon = 1e-10
                        );
                        assert_abs_diff_eq!(
                            (a.transmission - b.transmission).norm(),
                            0.0,
                            epsilon = 1e-10
                        );
                    }
                }
            }
        }
    }

    #[test]
    fn layered_splits_and_empty_stacks() {
        // Splitting a slab into two of the same material changes nothing; an air layer
        // and an empty stack are transparent (computed).
        let eta = m("concrete").complex_permittivity(2.4);
        let one = slab(eta, 0.2, 2.4, 0.4, Polarization::Tm);
        let two = layered(
            &[
                Layer {
                    eta,
                    thickness_m: 0.07,
                },
                Layer {
                    eta,
                    thickness_m: 0.13,
                },
            ],
            2.4,
            0.4,
            Polarization::Tm,
        );
        assert_abs_diff_eq!(
            (one.transmission - two.transmission).norm(),
            0.0,
            epsilon = 1e-12
        );
        assert_abs_diff_eq!(
            (one.reflection - two.reflection).norm(),
            0.0,
            epsilon = 1e-12
        );
        let empty = layered(&[], 2.4, 0.3, Polarization::Te);
        assert_abs_diff_eq!(empty.transmission.norm(), 1.0, epsilon = 1e-15);
        assert_abs_diff_eq!(empty.reflection.norm(), 0.0, epsilon = 1e-15);
        let none = slab(eta, 0.0, 2.4, PI / 2.0, Polarization::Te);
        assert_eq!(none.transmission, Complex64::new(1.0, 0.0));
        let air = layered(
            &[Layer {
                eta: AIR,
                thickness_m: 0.5,
            }],
            2.4,
            0.3,
            Polarization::Te,
        );
        assert_abs_diff_eq!(air.transmission.norm(), 1.0, epsilon = 1e-12);
    }

    #[test]
    fn thick_metal_is_opaque_not_nan() {
        // 10 mm of metal (1e7 S/m, P.2040-3 Table 3) blocks everything (common practice);
        // the arithmetic must give T = 0 and |R| ~ 1, never NaN.
        let eta = m("metal").complex_permittivity(2.4);
        for pol in [Polarization::Te, Polarization::Tm] {
            let s = slab(eta, 0.01, 2.4, 0.3, pol);
            let l = layered(
                &[Layer {
                    eta,
                    thickness_m: 0.01,
                }],
                2.4,
                0.3,
                pol,
            );
            for r in [s, l] {
                assert!(r.transmission.is_finite() && r.reflection.is_finite());
                assert!(r.transmission_loss_db() > 200.0);
                assert_abs_diff_eq!(r.reflection.norm(), 1.0, epsilon = 1e-3);
            }
        }
    }
}
