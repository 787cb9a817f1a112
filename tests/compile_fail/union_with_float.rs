// A union of a float and an integer inside an annotated module reads the float's bits as the integer.

#[twinstep::audit]
mod packing {
    #[derive(Clone, Copy)]
    pub union Packed {
        pub value: f64,
        pub bits: u64,
    }

    pub fn pack(x: f64) -> u64 {
        let packed = Packed { value: x };
        unsafe { packed.bits }
    }
}

fn main() {
    let _ = packing::pack(1.0);
}
