//! Synthetic measurements: the solver's output currents at a grid of points for known
//! parameters, with optional relative noise from a seeded generator. Demo and test data
//! only, never a check value by itself.

use mirrorpick::circuit::{Design, Mismatch, Netlist, OperatingPoint, SolveOptions};
use mirrorpick::fit::{generic_class, FitConfig, Measurement, MeasurementSet};
use mirrorpick::model::{Polarity, Topology, TransistorClass};
use rand::SeedableRng;
use rand_distr::{Distribution, Normal};

/// The parameters the data are generated from.
#[derive(Debug, Clone, Copy)]
pub struct Truth {
    pub bf: f64,
    pub vaf_v: f64,
    pub vbe_offset_v: f64,
    pub ikf_a: Option<f64>,
}

pub const TRUTH: Truth = Truth {
    bf: 180.0,
    vaf_v: 75.0,
    vbe_offset_v: 1.5e-3,
    ikf_a: None,
};

/// 27 °C: the generic class's TNOM, so BF(T) = BF.
pub const AMBIENT_K: f64 = 300.15;
pub const SUPPLY_V: f64 = 12.0;

pub fn true_class(t: &Truth) -> TransistorClass {
    let mut c = generic_class(Polarity::Npn);
    c.model.beta_forward = t.bf;
    c.model.early_voltage_v = Some(t.vaf_v);
    c.model.knee_current_a = t.ikf_a;
    c
}

/// Solved output currents at every (I_in, V_out, T) of the grid, times `1 + noise`, the
/// noise normal with relative standard deviation `sigma_rel`.
#[allow(clippy::too_many_arguments)]
pub fn measure(
    t: &Truth,
    topology: Topology,
    re_ohm: (f64, f64),
    currents: &[f64],
    voltages: &[f64],
    temps_k: &[f64],
    sigma_rel: f64,
    seed: u64,
) -> MeasurementSet {
    measure_with(
        SolveOptions::default(),
        t,
        topology,
        re_ohm,
        currents,
        voltages,
        temps_k,
        sigma_rel,
        seed,
    )
}

/// [`measure`] with solver options (self-heating).
#[allow(clippy::too_many_arguments)]
pub fn measure_with(
    opts: SolveOptions,
    t: &Truth,
    topology: Topology,
    re_ohm: (f64, f64),
    currents: &[f64],
    voltages: &[f64],
    temps_k: &[f64],
    sigma_rel: f64,
    seed: u64,
) -> MeasurementSet {
    let class = true_class(t);
    let design = Design {
        shape: mirrorpick::model::Shape::SINGLE,
        r_ref: None,
        topology,
        pair: &class,
        helper: Some(&class),
        re1_ohm: re_ohm.0,
        re2_ohm: re_ohm.1,
        re_tcr_per_k: 0.0,
    };
    let mm = Mismatch {
        dvbe_v: [t.vbe_offset_v, 0.0],
        ..Mismatch::default()
    };
    let net = Netlist::compile(&design, &mm).unwrap();
    let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(seed);
    let noise = Normal::new(0.0, 1.0).unwrap();
    let mut points = Vec::new();
    let mut line = 2;
    for &t_k in temps_k {
        for &i_in in currents {
            for &v in voltages {
                let op = OperatingPoint {
                    rail_v: None,
                    i_in_a: i_in,
                    v_out_v: v,
                    supply_v: SUPPLY_V,
                    t_amb_k: t_k,
                };
                let s = net.solve(&op, &opts).expect("synthetic point solves");
                let n: f64 = noise.sample(&mut rng);
                points.push(Measurement {
                    i_in_a: i_in,
                    v_out_v: v,
                    i_out_a: s.i_out_a * (1.0 + sigma_rel * n),
                    t_amb_k: Some(t_k),
                    line,
                });
                line += 1;
            }
        }
    }
    MeasurementSet {
        source: "synthetic.csv".to_string(),
        points,
    }
}

pub fn config(topology: Topology, re_ohm: (f64, f64)) -> FitConfig {
    FitConfig {
        topology,
        re1_ohm: re_ohm.0,
        re2_ohm: re_ohm.1,
        ambient_k: AMBIENT_K,
        supply_v: Some(SUPPLY_V),
        self_heating: false,
        fit_ikf: false,
        base: generic_class(Polarity::Npn),
        emit_class_id: None,
        date: "2026-12-01".to_string(),
    }
}

/// The shipped demo file: a simple mirror with 1 kΩ emitter resistors, generated from
/// [`TRUTH`] on the generic NPN class with self-heating, 100 ppm relative noise, seed 2026.
pub const DEMO_CSV: &str = "requirements-examples/bench-simple-mirror.csv";
pub const DEMO_SIGMA: f64 = 1e-4;

pub fn demo_set() -> MeasurementSet {
    let volts = [1.5, 2.0, 3.0, 4.0, 5.0, 6.0, 7.0, 8.0, 9.0, 10.0];
    measure_with(
        SolveOptions { self_heating: true },
        &TRUTH,
        Topology::Simple,
        (1e3, 1e3),
        &[10e-6, 100e-6, 1e-3],
        &volts,
        &[AMBIENT_K],
        DEMO_SIGMA,
        2026,
    )
}

/// CSV text of a measurement set, engineering values as a bench log would have them.
pub fn to_csv(set: &MeasurementSet, preamble: &str) -> String {
    let mut s = String::from(preamble);
    s.push_str("i_in,v_out,i_out,t_ambient\n");
    for p in &set.points {
        s.push_str(&format!(
            "{} uA,{} V,{:.5} uA,{} °C\n",
            (p.i_in_a * 1e6).round(),
            p.v_out_v,
            p.i_out_a * 1e6,
            p.t_amb_k.unwrap() - 273.15
        ));
    }
    s
}

pub const DEMO_PREAMBLE: &str = "\
# SYNTHETIC DEMO DATA, not a measurement of any real part.
# Generated by the mirrorpick circuit solver (tests/fit/synthetic.rs, demo_set) for a
# simple NPN mirror with RE1 = RE2 = 1 kOhm on a 12 V supply at 27 °C, from the generic
# small-signal class with BF = 180, VAF = 75 V and a V_BE offset of +1.5 mV on Q2, with
# self-heating (the class's 625 K/W own-die and 300 K/W die-to-die resistances), then
# multiplied by (1 + 1e-4 n), n standard normal (seeded ChaCha8, seed 2026): about what a
# good bench meter's reading error would add. Fit it with:
#   mirrorpick fit requirements-examples/bench-simple-mirror.csv --topology simple \\
#       --re1 1k --re2 1k --ambient 27C --supply 12V --self-heating
";
