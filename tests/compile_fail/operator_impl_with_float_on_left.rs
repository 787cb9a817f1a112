// `impl Mul<Vec2> for f64` would become `impl<T> Mul<Vec2<T>> for T`, which the orphan rules forbid.

#[twinstep::audit]
mod particles {
    use std::ops::Mul;

    #[derive(Clone, Copy)]
    pub struct Vec2 {
        pub x: f64,
        pub y: f64,
    }

    impl Mul<Vec2> for f64 {
        type Output = Vec2;
        fn mul(self, v: Vec2) -> Vec2 {
            Vec2 { x: self * v.x, y: self * v.y }
        }
    }

    pub fn drift(p: Vec2, dt: f64) -> Vec2 {
        dt * p
    }
}

fn main() {
    let p = particles::drift(particles::Vec2 { x: 1.0, y: 2.0 }, 0.1);
    let _ = p.x + p.y;
}
