//! From designs to what one copy consumes, in indices: blocks of devices that must share
//! a package, loose helpers, resistor line items. Also the model reductions (dominated
//! options, identical channels) and the packing patterns of each class.
//!
//! Everything here is plain combinatorics; the integer program lives in `milp`.

use std::collections::BTreeMap;

use super::problem::{BoardProblem, DesignUsage};

/// What one copy of a design consumes, in indices into the problem's part lists.
#[derive(Debug, Clone, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub(crate) struct Needs {
    pub pair_class: usize,
    /// Sizes (in devices) of the groups that must each sit in one package of
    /// `pair_class`, largest first. Empty when the pair class is a single.
    pub blocks: Vec<u32>,
    /// Singles of `pair_class` making up "pairs" when the class is a single.
    pub pair_singles: u32,
    /// Helpers not inside a block, and the single class they are bought as. `None`
    /// exactly when `loose_helpers == 0`.
    pub helper_class: Option<usize>,
    pub loose_helpers: u32,
    /// Array classes whose spare devices may take these helpers, ascending; empty when
    /// there are no loose helpers.
    pub helper_spares: Vec<usize>,
    /// (resistor item index, count), sorted by item.
    pub resistors: Vec<(usize, u32)>,
}

/// The block rule (module docs of `bom`): the whole topology in one package when asked
/// and it fits; else the pairs together when asked and they fit; else pair by pair.
pub(crate) fn blocks_for(devices_per_package: u32, o: &DesignUsage) -> (Vec<u32>, u32, u32) {
    let d = devices_per_package;
    let m = o.matched_devices.max(2 * o.pairs);
    if d == 1 {
        return (Vec::new(), m, o.helpers);
    }
    let whole = m + o.helpers;
    if o.keep_together && whole <= d {
        (vec![whole], 0, 0)
    } else if o.keep_together && m <= d {
        (vec![m], 0, o.helpers)
    } else if m == 2 * o.pairs {
        (vec![2; o.pairs as usize], 0, o.helpers)
    } else {
        // Several outputs over several arrays: full packages, then the rest, as the
        // placement fills them (`model::fanout::place`).
        let mut blocks = vec![d; (m / d) as usize];
        if !m.is_multiple_of(d) {
            blocks.push(m % d);
        }
        (blocks, 0, o.helpers)
    }
}

/// A resistor line item: class index and value.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) struct ResistorItem {
    pub class: usize,
    pub value_ohm: f64,
}

/// The validated problem in indices, reduced.
#[derive(Debug, Clone)]
pub(crate) struct Prepared {
    pub resistor_items: Vec<ResistorItem>,
    /// Per channel, per original option, its needs.
    pub needs: Vec<Vec<Needs>>,
    /// Groups of channels with the same count and the same kept options.
    pub groups: Vec<Group>,
    pub options_given: usize,
}

/// Channels interchangeable in the integer program. `kept[c][j]` is the original index of
/// channel `channels[c]`'s option at canonical position `j`; position `j` has the same
/// needs in every channel of the group.
#[derive(Debug, Clone)]
pub(crate) struct Group {
    pub channels: Vec<usize>,
    pub count: u32,
    pub kept: Vec<Vec<usize>>,
    pub options: Vec<Needs>,
}

impl Prepared {
    /// Needs of every option; assumes `problem.validate()` passed.
    pub fn new(problem: &BoardProblem) -> Prepared {
        let t_index = |id: &str| {
            problem
                .transistors
                .iter()
                .position(|t| t.id == id)
                .expect("validated")
        };
        let mut resistor_items: Vec<ResistorItem> = Vec::new();
        let mut needs = Vec::new();
        for ch in &problem.channels {
            let mut per = Vec::new();
            for o in &ch.options {
                let pair_class = t_index(&o.pair_class);
                let d = problem.transistors[pair_class].devices_per_package;
                let (blocks, pair_singles, loose) = blocks_for(d, o);
                let helper_class = if loose > 0 {
                    Some(t_index(
                        o.helper_single_class.as_deref().expect("validated"),
                    ))
                } else {
                    None
                };
                let mut helper_spares: Vec<usize> = match (helper_class, &o.helper_spare_classes) {
                    (None, _) => Vec::new(),
                    (Some(h), None) => (0..problem.transistors.len())
                        .filter(|&t| {
                            let tp = &problem.transistors[t];
                            tp.devices_per_package > 1
                                && tp.polarity == problem.transistors[h].polarity
                        })
                        .collect(),
                    (Some(_), Some(list)) => list
                        .iter()
                        .map(|id| t_index(id))
                        .filter(|&t| problem.transistors[t].devices_per_package > 1)
                        .collect(),
                };
                helper_spares.sort_unstable();
                helper_spares.dedup();
                let mut res: BTreeMap<usize, u32> = BTreeMap::new();
                for r in &o.resistors {
                    let class = problem
                        .resistors
                        .iter()
                        .position(|p| p.id == r.class)
                        .expect("validated");
                    // Values are compared exactly: the ranking hands over standard values.
                    let item = match resistor_items
                        .iter()
                        .position(|it| it.class == class && it.value_ohm == r.value_ohm)
                    {
                        Some(i) => i,
                        None => {
                            resistor_items.push(ResistorItem {
                                class,
                                value_ohm: r.value_ohm,
                            });
                            resistor_items.len() - 1
                        }
                    };
                    *res.entry(item).or_default() += r.count;
                }
                per.push(Needs {
                    pair_class,
                    blocks,
                    pair_singles,
                    helper_class,
                    loose_helpers: loose,
                    helper_spares,
                    resistors: res.into_iter().collect(),
                });
            }
            needs.push(per);
        }
        let options_given = needs.iter().map(Vec::len).sum();
        let groups = group_channels(problem, &needs);
        Prepared {
            resistor_items,
            needs,
            groups,
            options_given,
        }
    }

    pub fn options_kept(&self) -> usize {
        self.groups
            .iter()
            .map(|g| g.channels.len() * g.options.len())
            .sum()
    }
}

/// `a` is never worse than `b` in any board: same blocks in the same class (so every
/// packing of `b` serves `a` unchanged), and no more of anything else. Swapping `b` for
/// `a` in any solution keeps it feasible, costs no more and adds no line item.
pub(crate) fn dominates(a: &Needs, b: &Needs) -> bool {
    if a.pair_class != b.pair_class || a.blocks != b.blocks || a.pair_singles > b.pair_singles {
        return false;
    }
    let helpers_ok = a.loose_helpers == 0
        || (a.helper_class == b.helper_class
            && a.helper_spares == b.helper_spares
            && a.loose_helpers <= b.loose_helpers);
    helpers_ok
        && a.resistors.iter().all(|&(item, n)| {
            b.resistors
                .iter()
                .any(|&(other, m)| other == item && n <= m)
        })
}

/// Indices of the options worth keeping, in canonical (needs) order: drop every option
/// dominated by another, and of options with equal needs keep the one with the largest
/// governing margin (then the earliest).
fn kept_options(options: &[DesignUsage], needs: &[Needs]) -> Vec<usize> {
    let better = |i: usize, j: usize| {
        options[i]
            .governing_margin
            .total_cmp(&options[j].governing_margin)
            .then(j.cmp(&i))
            .is_gt()
    };
    let mut kept: Vec<usize> = (0..needs.len())
        .filter(|&j| {
            !(0..needs.len()).any(|i| {
                i != j && dominates(&needs[i], &needs[j]) && (needs[i] != needs[j] || better(i, j))
            })
        })
        .collect();
    kept.sort_by(|&i, &j| needs[i].cmp(&needs[j]));
    kept
}

fn group_channels(problem: &BoardProblem, needs: &[Vec<Needs>]) -> Vec<Group> {
    let mut groups: Vec<Group> = Vec::new();
    for (c, ch) in problem.channels.iter().enumerate() {
        let kept = kept_options(&ch.options, &needs[c]);
        let options: Vec<Needs> = kept.iter().map(|&k| needs[c][k].clone()).collect();
        match groups
            .iter_mut()
            .find(|g| g.count == ch.count && g.options == options)
        {
            Some(g) => {
                g.channels.push(c);
                g.kept.push(kept);
            }
            None => groups.push(Group {
                channels: vec![c],
                count: ch.count,
                kept: vec![kept],
                options,
            }),
        }
    }
    groups
}

/// Every non-empty multiset of the given block sizes that fits in one package of `d`
/// devices, as a list of sizes, largest first. These are the packing patterns.
pub(crate) fn patterns(sizes: &[u32], d: u32) -> Vec<Vec<u32>> {
    let mut sizes = sizes.to_vec();
    sizes.sort_unstable_by(|a, b| b.cmp(a));
    sizes.dedup();
    let mut out = Vec::new();
    fn rec(sizes: &[u32], room: u32, cur: &mut Vec<u32>, out: &mut Vec<Vec<u32>>) {
        for (i, &s) in sizes.iter().enumerate() {
            if s <= room {
                cur.push(s);
                out.push(cur.clone());
                rec(&sizes[i..], room - s, cur, out);
                cur.pop();
            }
        }
    }
    rec(&sizes, d, &mut Vec::new(), &mut out);
    out
}

/// Packages bought by one copy on its own, with no package shared with anything else:
/// the fewest packages its blocks fit in (a copy has at most a handful of blocks, so the
/// exact search is tiny), and the spare devices left in them.
pub(crate) fn standalone_packages(blocks: &[u32], d: u32) -> (u32, u32) {
    if blocks.is_empty() {
        return (0, 0);
    }
    fn rec(blocks: &[u32], bins: &mut Vec<u32>, d: u32, best: &mut usize) {
        if bins.len() >= *best {
            return;
        }
        let Some((&b, rest)) = blocks.split_first() else {
            *best = bins.len();
            return;
        };
        for i in 0..bins.len() {
            if bins[i] + b <= d {
                bins[i] += b;
                rec(rest, bins, d, best);
                bins[i] -= b;
            }
        }
        bins.push(b);
        rec(rest, bins, d, best);
        bins.pop();
    }
    let mut best = blocks.len();
    rec(blocks, &mut Vec::new(), d, &mut best);
    let used: u32 = blocks.iter().sum();
    (best as u32, best as u32 * d - used)
}

/// Parts one copy buys on its own: (class index, packages) for transistors, the helper
/// singles it still needs after its own spares, and its resistors.
pub(crate) fn standalone_parts(problem: &BoardProblem, n: &Needs) -> Vec<(Part, u32)> {
    let pair = &problem.transistors[n.pair_class];
    let (packages, spares) = standalone_packages(&n.blocks, pair.devices_per_package);
    let mut parts = Vec::new();
    if packages + n.pair_singles > 0 {
        parts.push((Part::Transistor(n.pair_class), packages + n.pair_singles));
    }
    if let Some(h) = n.helper_class {
        let in_spares = if n.helper_spares.contains(&n.pair_class) {
            spares.min(n.loose_helpers)
        } else {
            0
        };
        let singles = n.loose_helpers - in_spares;
        if singles > 0 {
            match parts.iter_mut().find(|(p, _)| *p == Part::Transistor(h)) {
                Some((_, q)) => *q += singles,
                None => parts.push((Part::Transistor(h), singles)),
            }
        }
    }
    for &(item, count) in &n.resistors {
        parts.push((Part::Resistor(item), count));
    }
    parts
}

/// A line item: a transistor class or a resistor (class, value) item.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub(crate) enum Part {
    Transistor(usize),
    Resistor(usize),
}

pub(crate) fn unit_cost(problem: &BoardProblem, prep: &Prepared, p: Part) -> f64 {
    match p {
        Part::Transistor(t) => problem.transistors[t].unit_cost,
        Part::Resistor(r) => problem.resistors[prep.resistor_items[r].class].unit_cost,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn usage(pairs: u32, helpers: u32, keep_together: bool) -> DesignUsage {
        DesignUsage {
            label: String::new(),
            topology: String::new(),
            pair_class: String::new(),
            pairs,
            matched_devices: 2 * pairs,
            helpers,
            helper_single_class: None,
            helper_spare_classes: None,
            keep_together,
            resistors: vec![],
            r_ref: None,
            governing_check: String::new(),
            governing_margin: 0.0,
        }
    }

    #[test]
    fn block_rule() {
        // Wilson in a quad: pair and helper share the package.
        assert_eq!(blocks_for(4, &usage(1, 1, true)), (vec![3], 0, 0));
        // Wilson in a dual: the helper is loose.
        assert_eq!(blocks_for(2, &usage(1, 1, true)), (vec![2], 0, 1));
        // Cascode in a quad: one 4-device block; in a dual: two pairs.
        assert_eq!(blocks_for(4, &usage(2, 0, true)), (vec![4], 0, 0));
        assert_eq!(blocks_for(2, &usage(2, 0, true)), (vec![2, 2], 0, 0));
        // Not kept together: pair by pair.
        assert_eq!(blocks_for(5, &usage(2, 1, false)), (vec![2, 2], 0, 1));
        // Singles: a "pair" is two packages.
        assert_eq!(blocks_for(1, &usage(1, 1, true)), (vec![], 2, 1));
        // One input and four outputs fill a five-device array; a beta helper with four
        // outputs has its helper loose; eight outputs take two arrays.
        let outputs = |n: u32, helpers: u32| DesignUsage {
            matched_devices: 1 + n,
            ..usage(1, helpers, true)
        };
        assert_eq!(blocks_for(5, &outputs(4, 0)), (vec![5], 0, 0));
        assert_eq!(blocks_for(5, &outputs(3, 1)), (vec![5], 0, 0));
        assert_eq!(blocks_for(5, &outputs(4, 1)), (vec![5], 0, 1));
        assert_eq!(blocks_for(5, &outputs(8, 0)), (vec![5, 4], 0, 0));
        assert_eq!(blocks_for(1, &outputs(4, 0)), (vec![], 5, 0));
    }

    #[test]
    fn patterns_of_a_five_device_array() {
        let mut p = patterns(&[2, 3, 4], 5);
        p.sort();
        assert_eq!(p, vec![vec![2], vec![2, 2], vec![3], vec![3, 2], vec![4]]);
        assert_eq!(patterns(&[3], 2), Vec::<Vec<u32>>::new());
    }

    #[test]
    fn standalone_packing() {
        assert_eq!(standalone_packages(&[2, 2], 2), (2, 0));
        assert_eq!(standalone_packages(&[2, 2], 4), (1, 0));
        assert_eq!(standalone_packages(&[3], 4), (1, 1));
        assert_eq!(standalone_packages(&[2, 2], 5), (1, 1));
        assert_eq!(standalone_packages(&[], 5), (0, 0));
    }

    #[test]
    fn dominance_needs_equal_blocks() {
        let base = Needs {
            pair_class: 0,
            blocks: vec![2],
            pair_singles: 0,
            helper_class: None,
            loose_helpers: 0,
            helper_spares: vec![],
            resistors: vec![],
        };
        let with_r = Needs {
            resistors: vec![(0, 2)],
            ..base.clone()
        };
        assert!(dominates(&base, &with_r));
        assert!(!dominates(&with_r, &base));
        // Fewer blocks is not dominance: freeing a package can strand helpers that used
        // its spare devices.
        let two = Needs {
            blocks: vec![2, 2],
            ..base.clone()
        };
        assert!(!dominates(&base, &two));
    }
}
