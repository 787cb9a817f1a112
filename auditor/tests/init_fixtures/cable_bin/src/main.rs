//! A cable simulation with no library: its kernels live in src/cable.rs.

mod cable;

fn main() {
    let mut cable = cable::Cable::new(0.1, 1.0, 0.01, 1e-5);
    let (mut v, mut out) = (vec![0.0; 64], vec![0.0; 64]);
    v[32] = 1.0;
    for _ in 0..100 {
        cable.step(&v, &mut out);
        std::mem::swap(&mut v, &mut out);
    }
    println!("{}", v[32]);
}
