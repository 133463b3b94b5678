//! The board optimum by enumeration, written from the problem statement alone: every
//! assignment of designs to channels, every feasible package count per class, every way
//! of giving spare devices to helpers. Slow, obviously right, for small problems only.

// Index loops read closest to the enumeration being described.
#![allow(clippy::needless_range_loop)]

use std::collections::BTreeMap;

use mirrorpick::bom::{BoardProblem, DesignUsage};

/// Groups of devices of one copy that must share a package: the whole topology when it
/// is kept together and fits, else its pairs together when they fit, else pair by pair.
/// Returns (groups, singles of the pair class, helpers still to place).
fn groups(d: u32, o: &DesignUsage) -> (Vec<u32>, u32, u32) {
    if d == 1 {
        (vec![], 2 * o.pairs, o.helpers)
    } else if o.keep_together && 2 * o.pairs + o.helpers <= d {
        (vec![2 * o.pairs + o.helpers], 0, 0)
    } else if o.keep_together && 2 * o.pairs <= d {
        (vec![2 * o.pairs], 0, o.helpers)
    } else {
        (vec![2; o.pairs as usize], 0, o.helpers)
    }
}

/// Fewest packages of `d` devices holding all groups (each group whole in one package).
fn min_packages(groups: &[u32], d: u32) -> u32 {
    fn go(rest: &[u32], bins: &mut Vec<u32>, d: u32) -> u32 {
        let Some((&g, rest)) = rest.split_first() else {
            return bins.len() as u32;
        };
        let mut best = u32::MAX;
        for i in 0..bins.len() {
            if bins[i] + g <= d {
                bins[i] += g;
                best = best.min(go(rest, bins, d));
                bins[i] -= g;
            }
        }
        bins.push(g);
        best = best.min(go(rest, bins, d));
        bins.pop();
        best
    }
    go(groups, &mut Vec::new(), d)
}

/// Cheapest total per build, or `None` when no board meets
/// the line-item limit.
pub fn optimum(p: &BoardProblem) -> Option<f64> {
    let class = |id: &str| p.transistors.iter().position(|t| t.id == id).unwrap();
    let mut best: Option<f64> = None;
    let sizes: Vec<usize> = p.channels.iter().map(|c| c.options.len()).collect();
    let mut pick = vec![0u32; sizes.len()];
    loop {
        // Needs of this assignment.
        let nt = p.transistors.len();
        let mut grp: Vec<Vec<u32>> = vec![vec![]; nt];
        let mut singles = vec![0u32; nt];
        // Loose helpers by (single class, classes whose spare devices may take them).
        let mut helpers: BTreeMap<(usize, Vec<usize>), u32> = BTreeMap::new();
        let mut resistors: BTreeMap<(String, u64), u32> = BTreeMap::new();
        for (ch, &k) in p.channels.iter().zip(&pick) {
            let o = &ch.options[k as usize];
            let c = class(&o.pair_class);
            for _ in 0..ch.count {
                let (g, s, h) = groups(p.transistors[c].devices_per_package, o);
                grp[c].extend(g);
                singles[c] += s;
                if h > 0 {
                    let single = class(o.helper_single_class.as_deref().unwrap());
                    let allowed: Vec<usize> = (0..nt)
                        .filter(|&t| {
                            let tp = &p.transistors[t];
                            tp.devices_per_package > 1
                                && match &o.helper_spare_classes {
                                    None => tp.polarity == p.transistors[single].polarity,
                                    Some(list) => list.contains(&tp.id),
                                }
                        })
                        .collect();
                    *helpers.entry((single, allowed)).or_default() += h;
                }
                for r in &o.resistors {
                    *resistors
                        .entry((r.class.clone(), r.value_ohm.to_bits()))
                        .or_default() += r.count;
                }
            }
        }
        // Every package count per class from the fewest to one group per package (any
        // count in between is reachable by splitting a package).
        let ranges: Vec<(u32, u32)> = (0..nt)
            .map(|c| {
                let d = p.transistors[c].devices_per_package;
                (min_packages(&grp[c], d), grp[c].len() as u32)
            })
            .collect();
        let mut count: Vec<u32> = ranges.iter().map(|r| r.0).collect();
        loop {
            let spares: Vec<u32> = (0..nt)
                .map(|c| {
                    let d = p.transistors[c].devices_per_package;
                    d * count[c] - grp[c].iter().sum::<u32>()
                })
                .collect();
            // Every split of helpers between allowed spare devices and singles: one
            // counter per (helper kind, allowed class) route.
            let kinds: Vec<(&(usize, Vec<usize>), &u32)> = helpers.iter().collect();
            let routes: Vec<(usize, usize)> = kinds
                .iter()
                .enumerate()
                .flat_map(|(k, ((_, allowed), _))| allowed.iter().map(move |&c| (k, c)))
                .collect();
            let mut z = vec![0u32; routes.len()];
            loop {
                let mut per_kind = vec![0u32; kinds.len()];
                let mut per_class = vec![0u32; nt];
                for (r, &(k, c)) in routes.iter().enumerate() {
                    per_kind[k] += z[r];
                    per_class[c] += z[r];
                }
                let fits = (0..kinds.len()).all(|k| per_kind[k] <= *kinds[k].1)
                    && (0..nt).all(|c| per_class[c] <= spares[c]);
                if fits {
                    let mut qty: Vec<u32> = (0..nt).map(|c| count[c] + singles[c]).collect();
                    for (k, ((single, _), n)) in kinds.iter().enumerate() {
                        qty[*single] += **n - per_kind[k];
                    }
                    let mut parts = 0.0;
                    let mut items = 0u32;
                    for c in 0..nt {
                        parts += qty[c] as f64 * p.transistors[c].unit_cost;
                        items += (qty[c] > 0) as u32;
                    }
                    for ((rc, _), n) in &resistors {
                        let unit = p.resistors.iter().find(|r| &r.id == rc).unwrap().unit_cost;
                        parts += *n as f64 * unit;
                        items += 1;
                    }
                    let total = parts * p.boards as f64 + items as f64 * p.line_item_cost;
                    if p.max_line_items.is_none_or(|l| items <= l) && best.is_none_or(|b| total < b)
                    {
                        best = Some(total);
                    }
                }
                if !odometer(&mut z, |r| *kinds[routes[r].0].1) {
                    break;
                }
            }
            if !odometer_from(&mut count, &ranges) {
                break;
            }
        }
        if !odometer(&mut pick, |i| sizes[i] as u32 - 1) {
            break;
        }
    }
    best
}

/// Advance a mixed-radix counter with digits `0..=max(i)`; false when it wraps.
fn odometer(v: &mut [u32], max: impl Fn(usize) -> u32) -> bool {
    for i in 0..v.len() {
        if v[i] < max(i) {
            v[i] += 1;
            return true;
        }
        v[i] = 0;
    }
    false
}

fn odometer_from(v: &mut [u32], ranges: &[(u32, u32)]) -> bool {
    for i in 0..v.len() {
        if v[i] < ranges[i].1 {
            v[i] += 1;
            return true;
        }
        v[i] = ranges[i].0;
    }
    false
}
