//! Drawing the members' parameters: Latin hypercube sampling (McKay, Beckman & Conover 1979,
//! Technometrics) or plain random sampling, both through each distribution's inverse CDF.
//!
//! Reproducibility: member i's uniform numbers come from a generator seeded with (seed, i) only,
//! and the Latin hypercube's stratum permutations (one per parameter) from (seed, parameter index)
//! only, so a member's draw does not depend on which thread runs it or on how many threads there are.

use rand::rngs::StdRng;
use rand::{Rng, SeedableRng};

use super::spec::{EnsembleSpec, Sampling};

/// SplitMix64's finaliser (Steele, Lea & Flood 2014): spreads nearby seeds over the whole range so
/// that streams for (seed, i) and (seed, i + 1) are unrelated.
fn mix(mut z: u64) -> u64 {
    z = z.wrapping_add(0x9e37_79b9_7f4a_7c15);
    z = (z ^ (z >> 30)).wrapping_mul(0xbf58_476d_1ce4_e5b9);
    z = (z ^ (z >> 27)).wrapping_mul(0x94d0_49bb_1331_11eb);
    z ^ (z >> 31)
}

/// The generator of stream `index` of kind `tag` under `seed`.
pub(crate) fn stream(seed: u64, tag: u64, index: u64) -> StdRng {
    StdRng::seed_from_u64(mix(mix(seed ^ tag).wrapping_add(index)))
}

/// A uniform number strictly inside (0, 1) (53 random bits, centred in their cell).
pub(crate) fn open_unit(rng: &mut StdRng) -> f64 {
    ((rng.next_u64() >> 11) as f64 + 0.5) / (1u64 << 53) as f64
}

const TAG_MEMBER: u64 = 0x6d65_6d62_6572; // "member"
const TAG_PERMUTATION: u64 = 0x7065_726d; // "perm"

/// The sampling design of an ensemble of `members` members.
#[derive(Debug, Clone)]
pub struct Design {
    seed: u64,
    members: usize,
    sampling: Sampling,
    /// Per parameter: the stratum of each member (Latin hypercube only).
    strata: Vec<Vec<u32>>,
}

impl Design {
    /// The design for `spec` with `members` members (≥ 1) and seed `seed`.
    pub fn new(spec: &EnsembleSpec, members: usize, seed: u64) -> Self {
        let strata = match spec.sampling {
            Sampling::Random => Vec::new(),
            Sampling::LatinHypercube => (0..spec.params.len())
                .map(|j| {
                    // Fisher–Yates shuffle of 0..members.
                    let mut rng = stream(seed, TAG_PERMUTATION, j as u64);
                    let mut p: Vec<u32> = (0..members as u32).collect();
                    for k in (1..members).rev() {
                        let r = (rng.next_u64() % (k as u64 + 1)) as usize;
                        p.swap(k, r);
                    }
                    p
                })
                .collect(),
        };
        Self {
            seed,
            members,
            sampling: spec.sampling,
            strata,
        }
    }

    /// Member `i`'s uniform numbers in (0, 1), one per parameter of the spec.
    pub fn unit(&self, i: usize, n_params: usize) -> Vec<f64> {
        let mut rng = stream(self.seed, TAG_MEMBER, i as u64);
        (0..n_params)
            .map(|j| {
                let v = open_unit(&mut rng);
                match self.sampling {
                    Sampling::Random => v,
                    Sampling::LatinHypercube => {
                        (f64::from(self.strata[j][i]) + v) / self.members as f64
                    }
                }
            })
            .collect()
    }

    /// Member `i`'s parameter values, in the order of `spec.params` and their units.
    pub fn draw(&self, spec: &EnsembleSpec, i: usize) -> Vec<f64> {
        self.unit(i, spec.params.len())
            .into_iter()
            .zip(&spec.params)
            .map(|(u, p)| p.dist.quantile(u))
            .collect()
    }
}
