// A generic vector crate implements `f64 * Vector<f64>` for the primitive, which the orphan rules cannot give a
// generic `T`: in the twin, `s * v` has no operator. The twin needs `v * s`.

use std::ops::Mul;

#[derive(Clone, Copy)]
pub struct V2<T> {
    pub x: T,
    pub y: T,
}

impl<T: Mul<Output = T> + Copy> Mul<T> for V2<T> {
    type Output = V2<T>;
    fn mul(self, s: T) -> V2<T> {
        V2 { x: self.x * s, y: self.y * s }
    }
}

impl Mul<V2<f64>> for f64 {
    type Output = V2<f64>;
    fn mul(self, v: V2<f64>) -> V2<f64> {
        V2 { x: self * v.x, y: self * v.y }
    }
}

#[twinstep::audit]
pub fn scaled(v: V2<f64>, s: f64) -> V2<f64> {
    s * v
}

fn main() {
    let _ = scaled(V2 { x: 1.0, y: 2.0 }, 0.5);
}
