//! Plane affine maps: the block-insert and drawing-to-site transforms.

use rfsite_geometry::Point2;

/// `x' = a·x + b·y + e`, `y' = c·x + d·y + f`.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Affine {
    a: f64,
    b: f64,
    c: f64,
    d: f64,
    e: f64,
    f: f64,
}

impl Affine {
    /// The identity.
    pub const IDENTITY: Affine = Affine {
        a: 1.0,
        b: 0.0,
        c: 0.0,
        d: 1.0,
        e: 0.0,
        f: 0.0,
    };

    /// A translation.
    pub fn translate(dx: f64, dy: f64) -> Affine {
        Affine {
            e: dx,
            f: dy,
            ..Affine::IDENTITY
        }
    }

    /// A rotation about the origin, degrees counter-clockwise.
    pub fn rotate_deg(deg: f64) -> Affine {
        let (s, c) = deg.to_radians().sin_cos();
        Affine {
            a: c,
            b: -s,
            c: s,
            d: c,
            ..Affine::IDENTITY
        }
    }

    /// A scaling about the origin (a negative factor mirrors).
    pub fn scale(sx: f64, sy: f64) -> Affine {
        Affine {
            a: sx,
            d: sy,
            ..Affine::IDENTITY
        }
    }

    /// `self ∘ inner`: first `inner`, then `self`.
    pub fn then_after(&self, inner: &Affine) -> Affine {
        Affine {
            a: self.a * inner.a + self.b * inner.c,
            b: self.a * inner.b + self.b * inner.d,
            c: self.c * inner.a + self.d * inner.c,
            d: self.c * inner.b + self.d * inner.d,
            e: self.a * inner.e + self.b * inner.f + self.e,
            f: self.c * inner.e + self.d * inner.f + self.f,
        }
    }

    /// The image of a point.
    pub fn apply(&self, x: f64, y: f64) -> Point2 {
        Point2::new(
            self.a * x + self.b * y + self.e,
            self.c * x + self.d * y + self.f,
        )
    }

    /// The largest factor by which the map stretches a length (the larger singular value).
    pub fn max_stretch(&self) -> f64 {
        let p = self.a * self.a + self.b * self.b + self.c * self.c + self.d * self.d;
        let det = self.a * self.d - self.b * self.c;
        let q = (p * p - 4.0 * det * det).max(0.0).sqrt();
        ((p + q) / 2.0).sqrt()
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn composition_applies_inner_first() {
        // Hand check: rotate (1, 0) by 90° to (0, 1), then translate by (2, 3) -> (2, 4).
        let m = Affine::translate(2.0, 3.0).then_after(&Affine::rotate_deg(90.0));
        let p = m.apply(1.0, 0.0);
        assert!((p.x - 2.0).abs() < 1e-12 && (p.y - 4.0).abs() < 1e-12);
    }

    #[test]
    fn stretch_of_a_non_uniform_scale_is_its_larger_factor() {
        // Singular values of diag(2, -3) rotated are 3 and 2 (hand check).
        let m = Affine::rotate_deg(30.0).then_after(&Affine::scale(2.0, -3.0));
        assert!((m.max_stretch() - 3.0).abs() < 1e-12);
    }
}
