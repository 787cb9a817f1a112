// A struct without float fields needs no twin: its impl blocks take `methods_only`.

#[twinstep::audit]
pub struct Grid {
    pub n: usize,
}

fn main() {
    let grid = Grid { n: 4 };
    let _ = grid.n;
}
