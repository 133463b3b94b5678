//! The finished board plan: BOM lines, packages with what sits in each device, the
//! design of every channel and where its transistors are, the totals, and the
//! every-channel-on-its-own baseline. Built from a solved program; every quantity and
//! cost here is recounted from the placement itself, not read from the solver.

use std::collections::{BTreeMap, BTreeSet, HashMap};

use crate::model::Polarity;

use super::milp::Solved;
use super::needs::{standalone_parts, unit_cost, Part, Prepared};
use super::problem::{BoardProblem, ResistorUse};

/// What a BOM line buys.
#[derive(Debug, Clone, PartialEq)]
pub enum BomItem {
    Transistor {
        class: String,
        package: String,
        devices_per_package: u32,
        polarity: Polarity,
    },
    Resistor {
        class: String,
        value_ohm: f64,
        /// The grade: tolerance as a fraction.
        tolerance: f64,
    },
}

#[derive(Debug, Clone, PartialEq)]
pub struct BomLine {
    /// 1-based line number.
    pub line: u32,
    pub item: BomItem,
    pub qty_per_board: u32,
    /// `qty_per_board * boards`.
    pub qty_per_build: u64,
    pub unit_cost: f64,
    /// `qty_per_build * unit_cost`.
    pub extended_cost: f64,
}

/// What a device of a package does.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum DeviceRole {
    /// Member of matched pair `pair` (1-based) of its copy.
    Matched {
        pair: u32,
    },
    Helper,
}

#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Occupant {
    /// Index into `BoardPlan::channels`.
    pub channel: usize,
    /// 1-based copy of the channel.
    pub copy: u32,
    pub role: DeviceRole,
}

/// One transistor package on each board.
#[derive(Debug, Clone, PartialEq)]
pub struct PackagePlacement {
    /// `Q1`, `Q2`, ... (per board; every board is the same).
    pub designator: String,
    pub class: String,
    /// One entry per device (device 1 first); `None` is an unused device.
    pub devices: Vec<Option<Occupant>>,
}

/// A transistor of one copy: package designator, 1-based device number, and the
/// device's own reference designator (`Q1B`: device 2 of package `Q1`; a single is just
/// `Q3`), per IEEE 315 / ASME Y14.44 as in `check::refdes`.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct DeviceSlot {
    pub designator: String,
    pub device: u32,
    pub reference: String,
}

#[derive(Debug, Clone, PartialEq)]
pub struct CopyPlacement {
    pub copy: u32,
    /// The matched devices, pair by pair (first pair's two devices first).
    pub matched: Vec<DeviceSlot>,
    pub helpers: Vec<DeviceSlot>,
}

#[derive(Debug, Clone, PartialEq)]
pub struct ChannelAssignment {
    pub channel: String,
    pub count: u32,
    /// Index of the chosen design in the channel's `options`.
    pub option: usize,
    pub label: String,
    pub topology: String,
    pub pair_class: String,
    pub helper_class: Option<String>,
    pub resistors: Vec<ResistorUse>,
    /// The programming resistor, also counted in `resistors` (see `DesignUsage::r_ref`).
    pub r_ref: Option<ResistorUse>,
    pub governing_check: String,
    pub governing_margin: f64,
    pub copies: Vec<CopyPlacement>,
}

/// The board as it would be without optimisation: every channel takes its cheapest
/// design on its own (ties: larger governing margin, then earlier option) and every copy
/// buys its own packages.
#[derive(Debug, Clone, PartialEq)]
pub struct Baseline {
    /// Per channel, the chosen option index.
    pub options: Vec<usize>,
    pub parts_cost_per_board: f64,
    pub line_items: u32,
    pub total_cost: f64,
    /// False when this baseline breaks `max_line_items` (it is then not a valid board).
    pub within_line_item_limit: bool,
}

/// Two or more copies sharing one package: their mutual heating was not part of any
/// single channel's verification.
#[derive(Debug, Clone, PartialEq)]
pub struct SharedPackage {
    pub designator: String,
    /// (channel index, copy) of every occupant, in device order, without repeats.
    pub occupants: Vec<(usize, u32)>,
}

/// Size of the program that was solved, for the curious and for benchmarks.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct ModelSize {
    pub options_given: usize,
    pub options_kept: usize,
    pub channel_groups: usize,
    pub variables: usize,
    pub constraints: usize,
}

/// The optimal board.
#[derive(Debug, Clone, PartialEq)]
pub struct BoardPlan {
    pub board: String,
    pub boards: u32,
    pub currency: String,
    pub line_item_cost: f64,
    pub max_line_items: Option<u32>,
    pub bom: Vec<BomLine>,
    pub packages: Vec<PackagePlacement>,
    pub channels: Vec<ChannelAssignment>,
    pub parts_cost_per_board: f64,
    /// `parts_cost_per_board * boards`.
    pub parts_cost_per_build: f64,
    /// `bom.len() * line_item_cost`.
    pub line_items_cost: f64,
    /// Per build: parts for every board plus the line items' fixed costs.
    pub total_cost: f64,
    pub baseline: Baseline,
    pub shared_packages: Vec<SharedPackage>,
    pub model: ModelSize,
}

impl BoardPlan {
    /// What the optimisation saves against the baseline (negative never happens when the
    /// baseline meets the line-item limit).
    pub fn saving(&self) -> f64 {
        self.baseline.total_cost - self.total_cost
    }
}

struct Pkg {
    class: usize,
    /// (size, first device, taken)
    blocks: Vec<(u32, u32, bool)>,
    devices: Vec<Option<Occupant>>,
}

pub(crate) fn build(problem: &BoardProblem, prep: &Prepared, solved: &Solved) -> BoardPlan {
    let mut pkgs: Vec<Pkg> = Vec::new();
    for (&t, pats) in &solved.packages {
        let d = problem.transistors[t].devices_per_package;
        for (pattern, n) in pats {
            for _ in 0..*n {
                let mut start = 0;
                let blocks = pattern
                    .iter()
                    .map(|&s| {
                        start += s;
                        (s, start - s, false)
                    })
                    .collect();
                pkgs.push(Pkg {
                    class: t,
                    blocks,
                    devices: vec![None; d as usize],
                });
            }
        }
    }
    let arrays = pkgs.len();
    let mut spares_left = solved.helpers_in_spares.clone();
    // Blocks and spare devices are taken in package order and never released, so a
    // cursor per (class, block size) and per class finds the next free one without
    // rescanning: the placement is linear in the number of copies.
    let mut block_cursor: HashMap<(usize, u32), usize> = HashMap::new();
    let mut spare_cursor: HashMap<usize, usize> = HashMap::new();
    let mut channels = Vec::new();
    for (c, ch) in problem.channels.iter().enumerate() {
        let k = solved.choice[c];
        let o = &ch.options[k];
        let n = &prep.needs[c][k];
        let mut copies = Vec::new();
        for copy in 1..=ch.count {
            let mut devs: Vec<(usize, u32)> = Vec::new();
            for &b in &n.blocks {
                let cur = block_cursor.entry((n.pair_class, b)).or_insert(0);
                let (p, bi) = loop {
                    let p = pkgs[..arrays]
                        .get(*cur)
                        .expect("the program supplies every block");
                    if p.class == n.pair_class {
                        if let Some(bi) =
                            p.blocks.iter().position(|&(s, _, taken)| s == b && !taken)
                        {
                            break (*cur, bi);
                        }
                    }
                    *cur += 1;
                };
                pkgs[p].blocks[bi].2 = true;
                let first = pkgs[p].blocks[bi].1;
                devs.extend((first..first + b).map(|dev| (p, dev)));
            }
            for _ in 0..n.pair_singles {
                devs.push((new_single(&mut pkgs, n.pair_class), 0));
            }
            let matched_count = o.matched_devices.max(2 * o.pairs) as usize;
            let mut helper_devs: Vec<(usize, u32)> = devs.split_off(matched_count);
            for _ in 0..n.loose_helpers {
                let h = n.helper_class.expect("loose helpers have a class");
                let kind = (h, n.helper_spares.clone());
                let spare = spares_left.get_mut(&kind).and_then(|per_class| {
                    per_class
                        .iter_mut()
                        .filter(|(_, left)| **left > 0)
                        .find_map(|(&c, left)| {
                            free_spare(&pkgs[..arrays], c, &mut spare_cursor)
                                .inspect(|_| *left -= 1)
                        })
                });
                let slot = spare.unwrap_or_else(|| (new_single(&mut pkgs, h), 0));
                // Mark at once so the next helper does not take the same device.
                pkgs[slot.0].devices[slot.1 as usize] = Some(Occupant {
                    channel: c,
                    copy,
                    role: DeviceRole::Helper,
                });
                helper_devs.push(slot);
            }
            for (i, &(p, dev)) in devs.iter().enumerate() {
                pkgs[p].devices[dev as usize] = Some(Occupant {
                    channel: c,
                    copy,
                    role: DeviceRole::Matched {
                        pair: i as u32 / 2 + 1,
                    },
                });
            }
            for &(p, dev) in &helper_devs {
                pkgs[p].devices[dev as usize] = Some(Occupant {
                    channel: c,
                    copy,
                    role: DeviceRole::Helper,
                });
            }
            copies.push((copy, devs, helper_devs));
        }
        channels.push((c, k, copies));
    }

    // Designators: packages by class (catalog order), arrays before singles of a class.
    let mut order: Vec<usize> = (0..pkgs.len()).collect();
    order.sort_by_key(|&i| (pkgs[i].class, i));
    let mut designator = vec![String::new(); pkgs.len()];
    for (n, &i) in order.iter().enumerate() {
        designator[i] = format!("Q{}", n + 1);
    }
    let number: Vec<usize> = {
        let mut v = vec![0; pkgs.len()];
        for (n, &i) in order.iter().enumerate() {
            v[i] = n + 1;
        }
        v
    };
    let slot = |(p, dev): (usize, u32)| DeviceSlot {
        designator: designator[p].clone(),
        device: dev + 1,
        reference: crate::check::refdes::device_designator(
            number[p],
            dev as usize,
            pkgs[p].devices.len() as u32,
        ),
    };
    let assignments: Vec<ChannelAssignment> = channels
        .into_iter()
        .map(|(c, k, copies)| {
            let ch = &problem.channels[c];
            let o = &ch.options[k];
            ChannelAssignment {
                channel: ch.name.clone(),
                count: ch.count,
                option: k,
                label: o.label.clone(),
                topology: o.topology.clone(),
                pair_class: o.pair_class.clone(),
                helper_class: if o.helpers > 0 {
                    o.helper_single_class.clone()
                } else {
                    None
                },
                resistors: o.resistors.clone(),
                r_ref: o.r_ref.clone(),
                governing_check: o.governing_check.clone(),
                governing_margin: o.governing_margin,
                copies: copies
                    .into_iter()
                    .map(|(copy, m, h)| CopyPlacement {
                        copy,
                        matched: m.into_iter().map(slot).collect(),
                        helpers: h.into_iter().map(slot).collect(),
                    })
                    .collect(),
            }
        })
        .collect();
    let packages: Vec<PackagePlacement> = order
        .iter()
        .map(|&i| PackagePlacement {
            designator: designator[i].clone(),
            class: problem.transistors[pkgs[i].class].id.clone(),
            devices: pkgs[i].devices.clone(),
        })
        .collect();
    let shared_packages = packages
        .iter()
        .filter_map(|p| {
            let mut seen: Vec<(usize, u32)> = Vec::new();
            for o in p.devices.iter().flatten() {
                if !seen.contains(&(o.channel, o.copy)) {
                    seen.push((o.channel, o.copy));
                }
            }
            (seen.len() > 1).then(|| SharedPackage {
                designator: p.designator.clone(),
                occupants: seen,
            })
        })
        .collect();

    // Quantities, recounted from the placement.
    let mut qty: BTreeMap<Part, u32> = BTreeMap::new();
    for p in &pkgs {
        *qty.entry(Part::Transistor(p.class)).or_default() += 1;
    }
    for (c, ch) in problem.channels.iter().enumerate() {
        for &(item, count) in &prep.needs[c][solved.choice[c]].resistors {
            *qty.entry(Part::Resistor(item)).or_default() += ch.count * count;
        }
    }
    let mut lines: Vec<(Part, u32)> = qty.into_iter().collect();
    lines.sort_by(|a, b| match (a.0, b.0) {
        (Part::Resistor(x), Part::Resistor(y)) => {
            let (ix, iy) = (&prep.resistor_items[x], &prep.resistor_items[y]);
            (ix.class, ix.value_ohm)
                .partial_cmp(&(iy.class, iy.value_ohm))
                .expect("finite values")
        }
        (x, y) => x.cmp(&y),
    });
    let boards = problem.boards;
    let bom: Vec<BomLine> = lines
        .into_iter()
        .enumerate()
        .map(|(i, (part, q))| {
            let item = match part {
                Part::Transistor(t) => {
                    let tp = &problem.transistors[t];
                    BomItem::Transistor {
                        class: tp.id.clone(),
                        package: tp.package.clone(),
                        devices_per_package: tp.devices_per_package,
                        polarity: tp.polarity,
                    }
                }
                Part::Resistor(r) => {
                    let it = &prep.resistor_items[r];
                    let rp = &problem.resistors[it.class];
                    BomItem::Resistor {
                        class: rp.id.clone(),
                        value_ohm: it.value_ohm,
                        tolerance: rp.tolerance,
                    }
                }
            };
            let unit = unit_cost(problem, prep, part);
            let per_build = q as u64 * boards as u64;
            BomLine {
                line: i as u32 + 1,
                item,
                qty_per_board: q,
                qty_per_build: per_build,
                unit_cost: unit,
                extended_cost: per_build as f64 * unit,
            }
        })
        .collect();
    let parts_cost_per_board: f64 = bom
        .iter()
        .map(|l| l.qty_per_board as f64 * l.unit_cost)
        .sum();
    let parts_cost_per_build = parts_cost_per_board * boards as f64;
    let line_items_cost = bom.len() as f64 * problem.line_item_cost;
    BoardPlan {
        board: problem.board.clone(),
        boards,
        currency: problem.currency.clone(),
        line_item_cost: problem.line_item_cost,
        max_line_items: problem.max_line_items,
        bom,
        packages,
        channels: assignments,
        parts_cost_per_board,
        parts_cost_per_build,
        line_items_cost,
        total_cost: parts_cost_per_build + line_items_cost,
        baseline: baseline(problem, prep),
        shared_packages,
        model: ModelSize {
            options_given: prep.options_given,
            options_kept: prep.options_kept(),
            channel_groups: prep.groups.len(),
            variables: solved.variables,
            constraints: solved.constraints,
        },
    }
}

fn new_single(pkgs: &mut Vec<Pkg>, class: usize) -> usize {
    pkgs.push(Pkg {
        class,
        blocks: Vec::new(),
        devices: vec![None],
    });
    pkgs.len() - 1
}

/// The first free device outside every block, in a package of the given class.
/// Packages before `cursor[class]` have no free spare device left (spares are taken in
/// order and never released), so the search starts there.
fn free_spare(
    arrays: &[Pkg],
    class: usize,
    cursor: &mut HashMap<usize, usize>,
) -> Option<(usize, u32)> {
    let cur = cursor.entry(class).or_insert(0);
    while let Some(p) = arrays.get(*cur) {
        if p.class == class {
            let in_blocks: u32 = p.blocks.iter().map(|b| b.0).sum();
            if let Some(d) =
                (in_blocks..p.devices.len() as u32).find(|&d| p.devices[d as usize].is_none())
            {
                return Some((*cur, d));
            }
        }
        *cur += 1;
    }
    None
}

fn baseline(problem: &BoardProblem, prep: &Prepared) -> Baseline {
    let copy_cost = |parts: &[(Part, u32)]| -> f64 {
        parts
            .iter()
            .map(|&(p, q)| unit_cost(problem, prep, p) * q as f64)
            .sum()
    };
    let mut options = Vec::new();
    let mut per_board = 0.0;
    let mut items: BTreeSet<Part> = BTreeSet::new();
    for (c, ch) in problem.channels.iter().enumerate() {
        let parts: Vec<Vec<(Part, u32)>> = prep.needs[c]
            .iter()
            .map(|n| standalone_parts(problem, n))
            .collect();
        let Some(best) = (0..parts.len()).min_by(|&a, &b| {
            copy_cost(&parts[a])
                .total_cmp(&copy_cost(&parts[b]))
                .then(
                    ch.options[b]
                        .governing_margin
                        .total_cmp(&ch.options[a].governing_margin),
                )
                .then(a.cmp(&b))
        }) else {
            continue;
        };
        options.push(best);
        per_board += ch.count as f64 * copy_cost(&parts[best]);
        items.extend(parts[best].iter().map(|&(p, _)| p));
    }
    let line_items = items.len() as u32;
    Baseline {
        options,
        parts_cost_per_board: per_board,
        line_items,
        total_cost: per_board * problem.boards as f64 + line_items as f64 * problem.line_item_cost,
        within_line_item_limit: problem.max_line_items.is_none_or(|l| line_items <= l),
    }
}
