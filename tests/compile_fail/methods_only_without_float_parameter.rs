// With `methods_only` the struct stays as it is, and a `step(&mut self)` without a float parameter gets no twin.

pub struct Rod {
    pub u: Vec<f64>,
}

#[twinstep::audit(methods_only)]
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
