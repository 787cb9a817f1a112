//! Which id and which list slot every input of a step gets.
//!
//! The inputs of a step are every cell of every field of every time level present when it starts (`previous`,
//! `current`, `next`, the scratch stages), each a *block* of consecutive ids, in that order. A value's list keeps
//! one entry per slot, so two inputs one value depends on must sit in different slots for their coefficients to
//! stay apart (a *clash* otherwise: rigorous, but the dropped entry is charged to the remainder). The slot is a
//! colouring of the grid, `(o_b + Σ_d m_d x_d) mod k` for block `b` and cell `x`: with `m_last = 1` and the other
//! multipliers chosen so that the 3^d box around a cell has as many distinct colours as `k` allows, the cells of a
//! compact stencil get different slots (the colouring idea of Curtis, Powell and Reid for sparse Jacobians, from
//! memory), and the block offsets `o_b` spread the blocks a kernel reads over the slots.
//!
//! Which blocks a kernel reads and how its boundaries wrap are not known in advance, so [`Colouring::candidates`]
//! lists alternatives (moduli below `k`, other block spreads) that the runner can try on the first step, keeping
//! the one with the fewest clashes.

use crate::audit::{Field, Levels};

/// The role of a block of inputs.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Role {
    Previous,
    Current,
    Next,
    Stage(usize),
}

/// One block: a field at one time level.
#[derive(Clone, Debug)]
pub struct Block {
    pub role: Role,
    pub field: usize,
    pub base: u32,
    pub shape: Vec<usize>,
}

impl Block {
    /// The number of cells.
    pub fn cells(&self) -> usize {
        self.shape.iter().product()
    }
}

/// The blocks of a level structure, in the order the runner visits them.
#[derive(Clone, Debug)]
pub struct Layout {
    pub blocks: Vec<Block>,
    pub ids: usize,
}

/// Every field of every level, with its role, in the layout's order.
pub fn fields_mut<T>(levels: &mut Levels<T>) -> impl Iterator<Item = (Role, usize, &mut Field<T>)> {
    let previous = levels.previous.iter_mut().enumerate().map(|(f, x)| (Role::Previous, f, x));
    let current = levels.current.iter_mut().enumerate().map(|(f, x)| (Role::Current, f, x));
    let next = levels.next.iter_mut().enumerate().map(|(f, x)| (Role::Next, f, x));
    let stages = levels
        .stages
        .iter_mut()
        .enumerate()
        .flat_map(|(s, level)| level.iter_mut().enumerate().map(move |(f, x)| (Role::Stage(s), f, x)));
    previous.chain(current).chain(next).chain(stages)
}

impl Layout {
    /// The layout of `levels`; `None` when the ids would not fit in 32 bits.
    pub fn of<T>(levels: &mut Levels<T>) -> Option<Layout> {
        let mut blocks = Vec::new();
        let mut base = 0usize;
        for (role, field, values) in fields_mut(levels) {
            blocks.push(Block { role, field, base: u32::try_from(base).ok()?, shape: values.shape().to_vec() });
            base = base.checked_add(values.len())?;
        }
        u32::try_from(base).ok()?;
        Some(Layout { blocks, ids: base })
    }
}

/// A colouring of the inputs: modulus, per-rank multipliers and per-block offsets.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct Colouring {
    pub modulus: usize,
    pub offsets: Vec<usize>,
}

impl Colouring {
    /// The colourings worth trying for `layout` with `k` slots, the default first: moduli from `k` down to half
    /// of it, and for each the block offsets spread over all blocks, over the `previous` and `current` ones, and
    /// over `current` alone (the blocks a kernel usually reads).
    pub fn candidates(layout: &Layout, k: usize) -> Vec<Colouring> {
        let mut out = Vec::new();
        let spreads: [&dyn Fn(Role) -> bool; 3] =
            [&|_| true, &|r| matches!(r, Role::Previous | Role::Current), &|r| r == Role::Current];
        for modulus in (k.div_ceil(2).max(1)..=k).rev() {
            for live in spreads {
                let count = layout.blocks.iter().filter(|b| live(b.role)).count().max(1);
                let spacing = (modulus / count).max(1);
                let mut next = 0;
                let offsets = layout
                    .blocks
                    .iter()
                    .map(|b| {
                        if live(b.role) {
                            next += 1;
                            ((next - 1) * spacing) % modulus
                        } else {
                            0
                        }
                    })
                    .collect();
                let colouring = Colouring { modulus, offsets };
                if !out.contains(&colouring) {
                    out.push(colouring);
                }
            }
        }
        out
    }

    /// The slot of every id.
    pub fn slots(&self, layout: &Layout) -> Vec<u8> {
        let mut slots = vec![0u8; layout.ids];
        for (block, &offset) in layout.blocks.iter().zip(&self.offsets) {
            let multipliers = multipliers(block.shape.len(), self.modulus);
            let mut index = vec![0usize; block.shape.len()];
            let start = block.base as usize;
            for slot in &mut slots[start..start + block.cells()] {
                let colour = index.iter().zip(&multipliers).fold(offset, |acc, (&x, &m)| (acc + x * m) % self.modulus);
                *slot = colour as u8;
                advance(&mut index, &block.shape);
            }
        }
        slots
    }
}

/// Steps a row-major multi-index to the next cell.
fn advance(index: &mut [usize], shape: &[usize]) {
    for (slot, &n) in index.iter_mut().zip(shape).rev() {
        *slot += 1;
        if *slot < n {
            return;
        }
        *slot = 0;
    }
}

/// Multipliers `m_d` (last = 1) for a grid of `rank` dimensions and `modulus` colours: the choice that gives the
/// most distinct colours over the 3^rank box of offsets, ties broken by the star `±e_d` (the 5- and 7-point
/// stencils). For rank 2 and 8 colours that is `(3, 1)`: the star's offsets 0, ±1, ±3 are distinct mod 8.
fn multipliers(rank: usize, modulus: usize) -> Vec<usize> {
    if rank <= 1 {
        return vec![1; rank];
    }
    if rank > 3 {
        // The search below grows as modulus^(rank − 1); beyond 3-D take powers of 3, which separate the box of a
        // grid with at least 3^rank colours (fewer colours clash, rigorously).
        return (0..rank).rev().map(|d| 3usize.pow(d as u32) % modulus.max(1)).collect();
    }
    let free = rank - 1;
    let mut best = (0usize, 0usize, vec![1; rank]);
    let combos = modulus.pow(free as u32);
    for code in 0..combos {
        let mut m: Vec<usize> = (0..free).map(|d| (code / modulus.pow(d as u32)) % modulus).collect();
        m.push(1);
        let colours = |offsets: &mut dyn Iterator<Item = Vec<i64>>| {
            let mut seen = vec![false; modulus];
            let mut distinct = 0;
            for offset in offsets {
                let c = offset.iter().zip(&m).map(|(&o, &md)| o * md as i64).sum::<i64>().rem_euclid(modulus as i64);
                distinct += usize::from(!seen[c as usize]);
                seen[c as usize] = true;
            }
            distinct
        };
        let box_offsets = (0..3usize.pow(rank as u32))
            .map(|code| (0..rank).map(|d| ((code / 3usize.pow(d as u32)) % 3) as i64 - 1).collect::<Vec<_>>());
        let star = (0..rank).flat_map(|d| {
            [-1i64, 1].into_iter().map(move |s| (0..rank).map(|e| if e == d { s } else { 0 }).collect::<Vec<_>>())
        });
        let score = (colours(&mut box_offsets.into_iter()), colours(&mut star.chain([vec![0; rank]])));
        if (score.0, score.1) > (best.0, best.1) {
            best = (score.0, score.1, m);
        }
    }
    best.2
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_five_point_star_gets_five_colours_of_eight() {
        // Offsets (0,0), (±1,0), (0,±1) map to 0, ±m_0, ±1 mod 8; distinct for m_0 = 3 (0, 3, 5, 1, 7) —
        // checked by hand (common practice, no source).
        let m = multipliers(2, 8);
        let colours: std::collections::BTreeSet<usize> = [(0i64, 0i64), (1, 0), (-1, 0), (0, 1), (0, -1)]
            .iter()
            .map(|&(a, b)| (a * m[0] as i64 + b).rem_euclid(8) as usize)
            .collect();
        assert_eq!(colours.len(), 5, "multipliers {m:?}");
        assert_eq!(m[1], 1);
    }

    #[test]
    fn one_dimensional_neighbours_get_distinct_slots() {
        let mut levels = Levels::<f64>::new(&[crate::audit::FieldSpec::new("u", &[10])], 2, 0);
        let layout = Layout::of(&mut levels).unwrap();
        assert_eq!(layout.ids, 20);
        let colouring = &Colouring::candidates(&layout, 4)[0];
        let slots = colouring.slots(&layout);
        // Current block starts at id 0 (no previous level): cells i-1, i, i+1 in distinct slots of 4.
        for i in 1..9 {
            let s = [slots[i - 1], slots[i], slots[i + 1]];
            assert!(s[0] != s[1] && s[1] != s[2] && s[0] != s[2], "{s:?}");
        }
    }
}
