// An annotated impl block whose struct carries no attribute: the twin is an impl of `RodTwin<T>`, which the
// struct's attribute would have emitted. The check beside it says what to do.

pub struct Rod {
    pub u: Vec<f64>,
}

#[twinstep::audit]
impl Rod {
    pub fn step(&mut self) {
        for v in self.u.iter_mut() {
            *v *= 0.5;
        }
    }
}

fn main() {
    let mut rod = Rod { u: vec![1.0] };
    rod.step();
}
