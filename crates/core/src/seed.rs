//! Counter-based seeding: every random stream is named, never shared.
//!
//! A trial's random numbers must not depend on which thread ran it or on what
//! ran before it. So no generator is ever passed along: each consumer derives
//! its own 256-bit seed from a key `(suite seed, scene id, sweep point, trial
//! index, stream name)` through a fixed, documented hash. The hash is
//! SplitMix64's finaliser applied over the key's bytes in a sponge-like
//! fashion: it is stable across Rust versions and platforms (unlike
//! `std::collections::hash_map::DefaultHasher`), which is all that matters
//! here; it is not meant to be cryptographic.

/// SplitMix64 finaliser (Steele, Lea, Flood, "Fast splittable pseudorandom
/// number generators", OOPSLA 2014): a bijective 64-bit mixer.
pub fn mix64(mut z: u64) -> u64 {
    z = (z ^ (z >> 30)).wrapping_mul(0xbf58_476d_1ce4_e5b9);
    z = (z ^ (z >> 27)).wrapping_mul(0x94d0_49bb_1331_11eb);
    z ^ (z >> 31)
}

/// A stable 64-bit hash of a byte string, with a domain word.
pub fn hash_bytes(domain: u64, bytes: &[u8]) -> u64 {
    let mut state = mix64(domain ^ 0x9e37_79b9_7f4a_7c15);
    for chunk in bytes.chunks(8) {
        let mut word = [0u8; 8];
        word[..chunk.len()].copy_from_slice(chunk);
        state = mix64(state ^ u64::from_le_bytes(word)).wrapping_add(0x9e37_79b9_7f4a_7c15);
    }
    mix64(state ^ bytes.len() as u64)
}

/// The identity of one trial, from which all of its random streams derive.
#[derive(Debug, Clone, PartialEq, Eq, Hash)]
pub struct StreamKey {
    /// The suite's (or the command line's) seed.
    pub suite_seed: u64,
    /// A stable name of the scene (its id in the suite, or its file stem).
    pub scene_id: String,
    /// Index of the sweep point the scene variant belongs to (0 without sweeps).
    pub sweep_point: u64,
    /// Trial index within the scene variant.
    pub trial: u64,
}

impl StreamKey {
    /// A key for trial `trial` of `scene_id` with no sweep.
    pub fn new(suite_seed: u64, scene_id: impl Into<String>, trial: u64) -> Self {
        StreamKey {
            suite_seed,
            scene_id: scene_id.into(),
            sweep_point: 0,
            trial,
        }
    }

    /// A stable 64-bit hash of the trial key alone (used to split trials into shards).
    pub fn trial_hash(&self) -> u64 {
        let scene = hash_bytes(1, self.scene_id.as_bytes());
        let mut h = mix64(self.suite_seed ^ scene);
        h = mix64(h ^ mix64(self.sweep_point.wrapping_add(0x51)));
        mix64(h ^ mix64(self.trial.wrapping_add(0xa7)))
    }

    /// The 256-bit seed of the named stream of this trial (for `ChaCha*Rng::from_seed`).
    ///
    /// ```
    /// use echobench_core::seed::StreamKey;
    /// let key = StreamKey::new(7, "corridor", 3);
    /// assert_eq!(key.stream_seed("noise"), key.stream_seed("noise"));
    /// assert_ne!(key.stream_seed("noise"), key.stream_seed("hum"));
    /// assert_ne!(key.stream_seed("noise"), StreamKey::new(7, "corridor", 4).stream_seed("noise"));
    /// ```
    pub fn stream_seed(&self, stream: &str) -> [u8; 32] {
        let base = mix64(self.trial_hash() ^ hash_bytes(2, stream.as_bytes()));
        let mut seed = [0u8; 32];
        for (lane, chunk) in seed.chunks_mut(8).enumerate() {
            let word =
                mix64(base.wrapping_add((lane as u64 + 1).wrapping_mul(0x9e37_79b9_7f4a_7c15)));
            chunk.copy_from_slice(&word.to_le_bytes());
        }
        seed
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn mix64_matches_the_published_splitmix_sequence() {
        // SplitMix64 with state 0: the first output is mix64(0x9e3779b97f4a7c15),
        // 0xe220a8397b1dcdaf (the reference C implementation's first value, common practice).
        assert_eq!(mix64(0x9e37_79b9_7f4a_7c15), 0xe220_a839_7b1d_cdaf);
    }

    #[test]
    fn key_fields_all_matter() {
        let base = StreamKey::new(1, "a", 0);
        let mut other = base.clone();
        other.sweep_point = 1;
        assert_ne!(base.trial_hash(), other.trial_hash());
        assert_ne!(base.trial_hash(), StreamKey::new(2, "a", 0).trial_hash());
        assert_ne!(base.trial_hash(), StreamKey::new(1, "b", 0).trial_hash());
    }
}
