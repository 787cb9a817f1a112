// A trait impl annotated on its own: the trait fixes the signatures, so the twin has nowhere to put `T`.

use std::ops::AddAssign;

pub struct Field {
    pub values: Vec<f64>,
}

#[twinstep::audit]
impl AddAssign<f64> for Field {
    fn add_assign(&mut self, shift: f64) {
        for v in self.values.iter_mut() {
            *v += shift;
        }
    }
}

fn main() {
    let mut field = Field { values: vec![1.0] };
    field += 0.5;
}
