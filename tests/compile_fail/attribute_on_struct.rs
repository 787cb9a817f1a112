// The attribute goes on a function, an impl block or an inline module, not on a struct.

#[twinstep::audit]
pub struct Grid {
    pub u: Vec<f64>,
}

fn main() {
    let grid = Grid { u: vec![0.0] };
    let _ = grid.u.len();
}
