// The attribute goes on a function, a struct or enum, an impl block or an inline module, not on a constant.

#[twinstep::audit]
pub const DT: f64 = 0.01;

fn main() {
    let _ = DT;
}
