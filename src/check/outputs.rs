//! Several outputs on one input side: each output matched against the input device on
//! its own, and the worst output governing every figure.
//!
//! The error budget's inputs split in two. An output's *own* inputs — the V_BE offsets
//! and beta mismatches of its devices against the input side's, and its RE2 — are drawn
//! independently for every output. The *common* inputs — RE1 and R_ref — move every
//! output together. Sensitivities are solved once, on output 1 (moving output 1's own
//! devices and reading output 1's error); every output has the same circuit around it, so
//! output k's own sensitivity is output 1's scaled by the ratio of their sigmas (an output
//! outside the input device's package is matched like two separate packages). Moving
//! output 1's devices changes the other outputs only through the shared base node, by a
//! further factor of about 1/BF, which the budget leaves out.

use rand::SeedableRng;
use rand_chacha::ChaCha8Rng;
use rand_distr::{Distribution, StandardNormal};

use super::budget::{Sensitivities, RANDOM_INPUTS};
use super::montecarlo;
use crate::model::{fanout, Matching, Shape, Topology, TransistorClass};

/// Budget inputs that belong to one output (V_BE offsets, beta mismatches, RE2).
pub const OWN_INPUTS: [usize; 5] = [0, 1, 2, 3, 5];

/// The matching of two separate packages (`TransistorClass::matching_or_default` of a
/// class without matching data).
fn unrelated() -> Matching {
    TransistorClass::unrelated_matching()
}

/// The factor by which pair statistics shrink when one side has `m` devices in parallel:
/// the offset of the difference of a one-device side and an m-device side is
/// `sigma_pair sqrt((1 + 1/m) / 2)` when each device deviates independently
/// (common practice, no source).
pub fn parallel_factor(shape: Shape) -> f64 {
    let m = f64::from(shape.output_parallel().max(shape.input_parallel()));
    ((1.0 + 1.0 / m) / 2.0).sqrt()
}

/// Per output (output 1 first): the factor each budget input's sigma has against output
/// 1's. All ones on a single-output design and on every output that shares the input
/// device's package.
pub fn output_scales(
    topology: Topology,
    shape: Shape,
    pair: &TransistorClass,
) -> Vec<[f64; RANDOM_INPUTS]> {
    let ones = [1.0; RANDOM_INPUTS];
    let Ok(form) = fanout::form(topology, shape) else {
        return vec![ones];
    };
    let seats = fanout::place(form, pair.devices_per_package);
    let own = pair.matching_or_default();
    let far = unrelated();
    let first_matched = fanout::output_matched(form, &seats, 1);
    (1..=shape.outputs)
        .map(|k| {
            let mut s = ones;
            if fanout::output_matched(form, &seats, k) != first_matched {
                let (vbe, beta) = if first_matched {
                    (
                        far.vbe_offset_sigma_v / own.vbe_offset_sigma_v,
                        far.beta_mismatch_sigma / own.beta_mismatch_sigma,
                    )
                } else {
                    (
                        own.vbe_offset_sigma_v / far.vbe_offset_sigma_v,
                        own.beta_mismatch_sigma / far.beta_mismatch_sigma,
                    )
                };
                s[0] = vbe;
                s[1] = vbe;
                s[2] = beta;
                s[3] = beta;
            }
            s
        })
        .collect()
}

/// Output k's sensitivities from output 1's (see the module docs).
pub fn scaled(s: &Sensitivities, scale: &[f64; RANDOM_INPUTS]) -> Sensitivities {
    let mut out = *s;
    for i in OWN_INPUTS {
        out[i] *= scale[i];
    }
    out
}

/// The standard-normal draws of each sampled build: the first stream's draws (output 1's
/// own inputs and the common ones, exactly what a single-output design sees), then the
/// own inputs of outputs 2..N from a stream of their own.
pub fn builds(
    seed: u64,
    samples: u32,
    outputs: u8,
) -> impl Iterator<Item = Vec<[f64; RANDOM_INPUTS]>> {
    let mut rng = ChaCha8Rng::seed_from_u64(seed ^ 0x4f55_5450_5554_5321);
    montecarlo::builds(seed, samples).map(move |z| {
        let mut all = vec![z];
        for _ in 1..outputs {
            let mut zk = z;
            for i in OWN_INPUTS {
                zk[i] = StandardNormal.sample(&mut rng);
            }
            all.push(zk);
        }
        all
    })
}

/// First-order yield over every output: a build is good when every output is within
/// `accuracy` at every corner. `nominal[c][k]` is output k's error at corner c, `sens[c]`
/// output 1's sensitivities there, `scales[k]` from `output_scales`.
pub fn linear_yield(
    nominal: &[Vec<f64>],
    sens: &[Sensitivities],
    scales: &[[f64; RANDOM_INPUTS]],
    accuracy: f64,
    seed: u64,
    samples: u32,
) -> f64 {
    if samples == 0 {
        return f64::NAN;
    }
    let outputs = scales.len().max(1) as u8;
    let scaled_sens: Vec<Vec<Sensitivities>> = sens
        .iter()
        .map(|s| scales.iter().map(|k| scaled(s, k)).collect())
        .collect();
    let mut good = 0u32;
    for z in builds(seed, samples, outputs) {
        let within = nominal.iter().zip(&scaled_sens).all(|(e0, sk)| {
            e0.iter().zip(sk).zip(&z).all(|((e0, s), z)| {
                let e = e0 + s.iter().zip(z).map(|(a, b)| a * b).sum::<f64>();
                e.abs() <= accuracy
            })
        });
        good += u32::from(within);
    }
    f64::from(good) / f64::from(samples)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn independent_outputs_multiply_their_yields() {
        // Two outputs, each with a 1 % sigma of its own and a 2 % limit: each is within
        // with P(|Z| <= 2) = 0.9545 (standard normal table), both with 0.9545^2 = 0.9111.
        let s = [[0.01, 0.0, 0.0, 0.0, 0.0, 0.0, 0.0]];
        let one = linear_yield(&[vec![0.0]], &s, &[[1.0; 7]], 0.02, 3, 40_000);
        let two = linear_yield(&[vec![0.0, 0.0]], &s, &[[1.0; 7]; 2], 0.02, 3, 40_000);
        assert!((one - 0.9545).abs() < 0.006, "{one}");
        assert!((two - 0.9111).abs() < 0.006, "{two}");
        // A common input (RE1) moves both outputs together: no second factor.
        let c = [[0.0, 0.0, 0.0, 0.0, 0.01, 0.0, 0.0]];
        let both = linear_yield(&[vec![0.0, 0.0]], &c, &[[1.0; 7]; 2], 0.02, 3, 40_000);
        assert!((both - 0.9545).abs() < 0.006, "{both}");
    }

    #[test]
    fn outputs_outside_the_input_package_are_matched_like_separate_packages() {
        let pair =
            crate::circuit::test_pair("array", crate::model::BjtParams::new(1e-14, 200.0, None));
        let pair = TransistorClass {
            devices_per_package: 5,
            ..pair
        };
        let scales = output_scales(Topology::Simple, Shape::outputs(8), &pair);
        assert_eq!(scales.len(), 8);
        assert!(scales[..4].iter().all(|s| *s == [1.0; 7]));
        // 5 mV against the class's 1 mV; 10 % against 2 %.
        assert!((scales[4][0] - 5.0).abs() < 1e-12 && (scales[7][2] - 5.0).abs() < 1e-12);
        assert_eq!(scales[4][5], 1.0);
    }
}
