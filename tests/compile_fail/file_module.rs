// A module in its own file: the attribute sees the `mod solver;` line only. The build helper twins the file.

#[twinstep::audit]
#[path = "file_module/solver.rs"]
mod solver;

fn main() {
    let mut u = [1.0];
    solver::step(&mut u);
}
