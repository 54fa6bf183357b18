//! Points and wall segments in the floor plane.

use std::ops::{Add, Mul, Neg, Sub};

/// A point (or a vector) in the floor plane, in metres.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct Point2 {
    /// East-west coordinate, metres.
    pub x: f64,
    /// North-south coordinate, metres.
    pub y: f64,
}

impl Point2 {
    /// A point at `(x, y)` metres.
    pub const fn new(x: f64, y: f64) -> Self {
        Self { x, y }
    }

    /// Euclidean distance to `o`, metres.
    pub fn distance(&self, o: Point2) -> f64 {
        (*self - o).length()
    }

    /// Dot product, treating both points as vectors.
    pub fn dot(&self, o: Point2) -> f64 {
        self.x * o.x + self.y * o.y
    }

    /// z-component of the cross product `self × o`; positive when `o` lies
    /// counter-clockwise of `self`.
    pub fn cross(&self, o: Point2) -> f64 {
        self.x * o.y - self.y * o.x
    }

    /// Length of the vector, metres.
    pub fn length(&self) -> f64 {
        self.x.hypot(self.y)
    }

    /// Whether both coordinates are finite.
    pub fn is_finite(&self) -> bool {
        self.x.is_finite() && self.y.is_finite()
    }
}

impl Add for Point2 {
    type Output = Point2;
    fn add(self, o: Point2) -> Point2 {
        Point2::new(self.x + o.x, self.y + o.y)
    }
}

impl Sub for Point2 {
    type Output = Point2;
    fn sub(self, o: Point2) -> Point2 {
        Point2::new(self.x - o.x, self.y - o.y)
    }
}

impl Mul<f64> for Point2 {
    type Output = Point2;
    fn mul(self, k: f64) -> Point2 {
        Point2::new(self.x * k, self.y * k)
    }
}

impl Neg for Point2 {
    type Output = Point2;
    fn neg(self) -> Point2 {
        Point2::new(-self.x, -self.y)
    }
}

/// A straight wall (or any closed line segment) from `a` to `b`, metres.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Segment {
    /// First end point.
    pub a: Point2,
    /// Second end point.
    pub b: Point2,
}

impl Segment {
    /// The segment from `a` to `b`.
    pub const fn new(a: Point2, b: Point2) -> Self {
        Self { a, b }
    }

    /// Length, metres.
    pub fn length(&self) -> f64 {
        self.a.distance(self.b)
    }

    /// Unit vector from `a` to `b`; the zero vector for a degenerate
    /// (zero-length) segment.
    pub fn direction(&self) -> Point2 {
        let d = self.b - self.a;
        let len = d.length();
        if len > 0.0 && len.is_finite() {
            Point2::new(d.x / len, d.y / len)
        } else {
            Point2::default()
        }
    }

    /// Unit normal: [`direction`](Self::direction) turned a quarter turn
    /// counter-clockwise (points to the left of `a → b`). Zero for a
    /// degenerate segment.
    pub fn normal(&self) -> Point2 {
        let d = self.direction();
        Point2::new(-d.y, d.x)
    }

    /// The point at parameter `t` (0 at `a`, 1 at `b`).
    pub fn point_at(&self, t: f64) -> Point2 {
        self.a + (self.b - self.a) * t
    }

    /// Whether all four coordinates are finite.
    pub fn is_finite(&self) -> bool {
        self.a.is_finite() && self.b.is_finite()
    }

    /// Axis-aligned bounding box as `(min, max)`.
    pub fn bbox(&self) -> (Point2, Point2) {
        (
            Point2::new(self.a.x.min(self.b.x), self.a.y.min(self.b.y)),
            Point2::new(self.a.x.max(self.b.x), self.a.y.max(self.b.y)),
        )
    }
}

/// Shortest distance from `p` to the closed segment `s`, metres. A degenerate
/// segment behaves as the point `s.a`.
pub fn distance_point_segment(p: Point2, s: &Segment) -> f64 {
    let e = s.b - s.a;
    let len2 = e.dot(e);
    if len2 <= 0.0 || !len2.is_finite() {
        return p.distance(s.a);
    }
    let t = ((p - s.a).dot(e) / len2).clamp(0.0, 1.0);
    p.distance(s.point_at(t))
}

/// Whether two segments cross at a single point interior to both, each
/// segment's end points lying more than [`EPS_M`](crate::EPS_M) from the
/// other's line. Touching, end-point contact and collinear overlap are not
/// proper intersections.
pub fn segments_intersect_properly(s: &Segment, t: &Segment) -> bool {
    fn straddles(line: &Segment, other: &Segment) -> bool {
        let u = line.direction();
        if u == Point2::default() {
            return false;
        }
        let da = u.cross(other.a - line.a);
        let db = u.cross(other.b - line.a);
        (da > crate::EPS_M && db < -crate::EPS_M) || (da < -crate::EPS_M && db > crate::EPS_M)
    }
    straddles(s, t) && straddles(t, s)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn segment_basics_hand_values() {
        let s = Segment::new(Point2::new(1.0, 1.0), Point2::new(4.0, 5.0));
        assert_eq!(s.length(), 5.0);
        assert_eq!(s.direction(), Point2::new(0.6, 0.8));
        assert_eq!(s.normal(), Point2::new(-0.8, 0.6));
        let z = Segment::new(Point2::new(1.0, 1.0), Point2::new(1.0, 1.0));
        assert_eq!(z.direction(), Point2::default());
        assert_eq!(z.normal(), Point2::default());
    }

    #[test]
    fn distance_point_segment_hand_values() {
        let s = Segment::new(Point2::new(0.0, 0.0), Point2::new(10.0, 0.0));
        assert_eq!(distance_point_segment(Point2::new(5.0, 3.0), &s), 3.0);
        assert_eq!(distance_point_segment(Point2::new(-3.0, 4.0), &s), 5.0);
        assert_eq!(distance_point_segment(Point2::new(13.0, -4.0), &s), 5.0);
        let z = Segment::new(Point2::new(1.0, 1.0), Point2::new(1.0, 1.0));
        assert_eq!(distance_point_segment(Point2::new(4.0, 5.0), &z), 5.0);
    }

    #[test]
    fn proper_intersection_hand_cases() {
        let p = |x, y| Point2::new(x, y);
        let h = Segment::new(p(0.0, 0.0), p(10.0, 0.0));
        assert!(segments_intersect_properly(
            &h,
            &Segment::new(p(5.0, -1.0), p(5.0, 1.0))
        ));
        // T-junction: end point on the other segment.
        assert!(!segments_intersect_properly(
            &h,
            &Segment::new(p(5.0, 0.0), p(5.0, 1.0))
        ));
        // Collinear overlap.
        assert!(!segments_intersect_properly(
            &h,
            &Segment::new(p(2.0, 0.0), p(12.0, 0.0))
        ));
    }
}
