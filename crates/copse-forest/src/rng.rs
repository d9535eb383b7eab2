//! Per-task random generators: every random draw in the engine comes from a generator
//! seeded by (master seed, purpose, index, sub-index), so results never depend on which
//! thread did the work or in what order.
use rand::SeedableRng;
use rand_xoshiro::Xoshiro256PlusPlus;

/// What a generator is for; each purpose has its own independent streams.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) enum Purpose {
    /// Tree `t`'s case sample.
    Sample = 1,
    /// Tree `t`'s input draws during growth.
    Grow = 2,
    /// Permutation of input `j` among tree `t`'s out-of-bag rows.
    OobPermute = 3,
    /// Permutation of input `j`, repeat `r`, on a held-out set.
    HeldOutPermute = 4,
    /// Permutation `r` of the outcome, and the seed of the forest trained on it.
    ResponsePermute = 5,
    /// Seed series `s` of a stability report: cross-validation folds and forest seeds.
    Stability = 6,
    /// The split of the rows into two halves for hold-out importance.
    HalfSplit = 7,
    /// Permutation of input `j` among the held-out half's rows for tree `t` of one
    /// half's forest (hold-out importance; each half has its own seed).
    HalfPermute = 8,
    /// The rows whose own curves an effect curve keeps, or the rows an effect curve
    /// averages over when capped.
    EffectRows = 9,
}

/// SplitMix64 output function (Steele, Lea & Flood 2014, "Fast splittable
/// pseudorandom number generators"): a bijective mix of `x + golden gamma`.
fn splitmix64(x: u64) -> u64 {
    let mut z = x.wrapping_add(0x9e37_79b9_7f4a_7c15);
    z = (z ^ (z >> 30)).wrapping_mul(0xbf58_476d_1ce4_e5b9);
    z = (z ^ (z >> 27)).wrapping_mul(0x94d0_49bb_1331_11eb);
    z ^ (z >> 31)
}

/// The 64-bit seed of `(seed, purpose, index, sub)`: the four numbers chained through
/// SplitMix64. Handed as is to code that seeds its own generator (the tree grower).
pub(crate) fn task_seed(seed: u64, purpose: Purpose, index: u64, sub: u64) -> u64 {
    let mut h = splitmix64(seed);
    h = splitmix64(h ^ purpose as u64);
    h = splitmix64(h ^ index);
    splitmix64(h ^ sub)
}

/// The generator for `(seed, purpose, index, sub)`: the [`task_seed`], which
/// Xoshiro256++ expands (again with SplitMix64) into its 256-bit state.
pub(crate) fn task_rng(seed: u64, purpose: Purpose, index: u64, sub: u64) -> Xoshiro256PlusPlus {
    Xoshiro256PlusPlus::seed_from_u64(task_seed(seed, purpose, index, sub))
}

#[cfg(test)]
mod tests {
    use super::*;
    use rand::Rng as _;

    #[test]
    fn streams_differ_and_repeat() {
        let a = task_rng(7, Purpose::Sample, 0, 0).next_u64();
        assert_eq!(a, task_rng(7, Purpose::Sample, 0, 0).next_u64());
        assert_ne!(a, task_rng(7, Purpose::Sample, 1, 0).next_u64());
        assert_ne!(a, task_rng(7, Purpose::Grow, 0, 0).next_u64());
        assert_ne!(a, task_rng(8, Purpose::Sample, 0, 0).next_u64());
        assert_ne!(a, task_rng(7, Purpose::Sample, 0, 1).next_u64());
    }
}
