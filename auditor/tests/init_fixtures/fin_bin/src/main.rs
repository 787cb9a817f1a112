//! A fin simulation with no library: its kernels live in src/fin.rs.

mod fin;

fn main() {
    let mut fin = fin::Fin::new(0.3, 1e-3);
    let (mut theta, mut out) = (vec![0.0; 40], vec![0.0; 40]);
    theta[0] = 80.0;
    for _ in 0..500 {
        fin.step(&theta, &mut out);
        std::mem::swap(&mut theta, &mut out);
    }
    println!("tip: {} K above the air after {} steps", theta[39], fin.taken);
}
