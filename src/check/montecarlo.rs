//! Monte Carlo yield: the fraction of sampled builds whose every corner is within the
//! accuracy requirement.
//!
//! A build draws each mismatch input from a normal distribution (V_BE offsets and beta
//! mismatches with the class's sigmas, resistor deviations with tolerance/3). Its error at
//! a corner is the solved nominal error plus the solved per-sigma sensitivities times the
//! drawn values, the same first-order propagation the random error uses, so yield and the
//! accuracy verdict speak of the same circuit. The generator is ChaCha8 seeded from the
//! user's seed; every candidate sees the same draws, so results do not depend on the
//! order of evaluation or the number of threads.

use rand::SeedableRng;
use rand_chacha::ChaCha8Rng;
use rand_distr::{Distribution, StandardNormal};

use super::budget::{Sensitivities, RANDOM_INPUTS};

/// Yield of `samples` builds. `nominal[c]` and `sens[c]` are the error and sensitivities
/// of corner `c`. With no samples the yield is undefined (NaN).
pub fn linear_yield(
    nominal: &[f64],
    sens: &[Sensitivities],
    accuracy: f64,
    seed: u64,
    samples: u32,
) -> f64 {
    if samples == 0 {
        return f64::NAN;
    }
    let mut good = 0u32;
    for z in builds(seed, samples) {
        let within = nominal.iter().zip(sens).all(|(e0, s)| {
            let e = e0 + s.iter().zip(&z).map(|(a, b)| a * b).sum::<f64>();
            e.abs() <= accuracy
        });
        good += u32::from(within);
    }
    f64::from(good) / f64::from(samples)
}

/// Inputs drawn from the first stream (the mirror's own); R_ref's deviation comes from
/// a second stream, so designs without R_ref see exactly the draws they always saw.
const MIRROR_INPUTS: usize = 6;

/// The standard-normal draws of each sampled build, in input order: the same stream for
/// the first-order yield and for the re-solved one.
pub fn builds(seed: u64, samples: u32) -> impl Iterator<Item = [f64; RANDOM_INPUTS]> {
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    let mut rng_ref = ChaCha8Rng::seed_from_u64(seed ^ 0x5245_465f_5245_5346);
    (0..samples).map(move |_| {
        let mut z = [0.0; RANDOM_INPUTS];
        for x in z.iter_mut().take(MIRROR_INPUTS) {
            *x = StandardNormal.sample(&mut rng);
        }
        for x in z.iter_mut().skip(MIRROR_INPUTS) {
            *x = StandardNormal.sample(&mut rng_ref);
        }
        z
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn one_input_matches_the_normal_distribution() {
        // A single corner, no systematic error, 1-sigma error 1 %: P(|Z| <= 2) = 0.9545
        // (standard normal table).
        let y = linear_yield(
            &[0.0],
            &[[0.01, 0.0, 0.0, 0.0, 0.0, 0.0, 0.0]],
            0.02,
            7,
            20_000,
        );
        assert!((y - 0.9545).abs() < 0.01, "{y}");
    }

    #[test]
    fn same_seed_same_yield_other_seed_other_draws() {
        let s = [[0.004, 0.0, 0.002, 0.0, 0.001, 0.001, 0.0]];
        let a = linear_yield(&[0.003], &s, 0.01, 1, 500);
        let b = linear_yield(&[0.003], &s, 0.01, 1, 500);
        assert_eq!(a, b);
        assert!(linear_yield(&[0.0], &s, 1.0, 1, 0).is_nan());
        // Nothing passes when the nominal error alone is out of spec.
        assert_eq!(linear_yield(&[0.05], &s, 0.01, 3, 100), 0.0);
    }
}
