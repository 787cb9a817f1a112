// A function with no float anywhere: its twin would compute nothing a lens could follow.

#[twinstep::audit]
pub fn count_cells(n: usize) -> usize {
    n + 2
}

fn main() {
    let _ = count_cells(10);
}
