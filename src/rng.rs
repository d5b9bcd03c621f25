//! Reproducible random streams.
//!
//! Every random sample is a pure function of `(seed, tag, index)`: the generator is ChaCha8
//! (`rand_chacha`, a portable counter-based generator whose output is fixed by its specification),
//! keyed by the user's seed and a tag naming the purpose of the stream, with the sample index as
//! the ChaCha stream number. Results therefore do not depend on the number of threads, on the
//! order in which samples are computed, or on how a run is split into parts.

use rand::SeedableRng;
use rand_chacha::ChaCha8Rng;

/// What a random stream is used for; streams with different tags are independent.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
#[repr(u64)]
pub enum Tag {
    /// Brownian driving functions (base increments and bridge points).
    Driving = 0x6472_6976_696e_6701,
    /// Seeds drawn when the user gives none.
    SeedDraw = 0x7365_6564_6472_6177,
    /// CLE explorations (one stream per branch of a sample's exploration tree).
    Cle = 0x636c_655f_6578_706c,
    /// Whole CLE configurations (`loops`; one stream per branch).
    Loops = 0x636c_655f_6c6f_6f70,
    /// Lattice reference models (`lattice`; one stream per sample).
    Lattice = 0x6c61_7474_6963_6501,
    /// Bootstrap resampling of estimators (`measure`).
    Bootstrap = 0x626f_6f74_7374_7201,
}

/// The generator of sample `index` of a run with `seed`, for purpose `tag`.
pub fn stream(seed: u64, tag: Tag, index: u64) -> ChaCha8Rng {
    let mut key = [0u8; 32];
    key[..8].copy_from_slice(&seed.to_le_bytes());
    key[8..16].copy_from_slice(&(tag as u64).to_le_bytes());
    let mut g = ChaCha8Rng::from_seed(key);
    g.set_stream(index);
    g
}

/// The generator of part `sub` of sample `index` (for example one branch of an exploration
/// tree, numbered in the deterministic order in which the branches are created): the ChaCha key
/// holds `(seed, tag, sub)` and the stream number is the sample index, so the result is a pure
/// function of `(seed, tag, index, sub)`.
pub fn substream(seed: u64, tag: Tag, index: u64, sub: u64) -> ChaCha8Rng {
    let mut key = [0u8; 32];
    key[..8].copy_from_slice(&seed.to_le_bytes());
    key[8..16].copy_from_slice(&(tag as u64).to_le_bytes());
    key[16..24].copy_from_slice(&sub.to_le_bytes());
    let mut g = ChaCha8Rng::from_seed(key);
    g.set_stream(index);
    g
}

/// Move a generator to the start of 64-byte block `block` of its stream (blocks `< 2^63` are
/// used sequentially; higher blocks are addressed individually).
pub fn seek_block(g: &mut ChaCha8Rng, block: u64) {
    g.set_word_pos(block as u128 * 16);
}

/// A fresh seed when the user gives none (from the system clock and process id); it is recorded
/// in every output so the run can be repeated.
pub fn fresh_seed() -> u64 {
    use std::time::{SystemTime, UNIX_EPOCH};
    let nanos = SystemTime::now()
        .duration_since(UNIX_EPOCH)
        .map(|d| d.as_nanos() as u64)
        .unwrap_or(0);
    let mut x = nanos ^ ((std::process::id() as u64) << 32) ^ (Tag::SeedDraw as u64);
    // SplitMix64 finaliser, then keep 53 bits so the seed survives a JSON round trip as a number.
    x = (x ^ (x >> 30)).wrapping_mul(0xbf58_476d_1ce4_e5b9);
    x = (x ^ (x >> 27)).wrapping_mul(0x94d0_49bb_1331_11eb);
    (x ^ (x >> 31)) >> 11
}
