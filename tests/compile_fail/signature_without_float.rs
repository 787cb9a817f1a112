// A function whose signature has no `f64`: the twin would have nothing to take or return.

#[twinstep::audit]
pub fn count_cells(n: usize) -> usize {
    let h = 1.0 / n as f64;
    (1.0 / h) as usize
}

fn main() {
    let _ = count_cells(10);
}
