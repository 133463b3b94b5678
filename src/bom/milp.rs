//! The integer program itself: variables, constraints, objective, and reading the solution
//! back. The formulation is stated in the `bom` module docs; the names here follow it.

use std::collections::BTreeMap;

use good_lp::{
    variable, Expression, ProblemVariables, ResolutionError, Solution, SolutionStatus, SolverModel,
    Variable, WithInitialSolution,
};

use super::needs::{patterns, standalone_parts, Part, Prepared};
use super::problem::{BoardProblem, BomError};

/// What to minimise.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) enum Goal {
    /// Total cost per build, under the line-item limit if any.
    Cost,
    /// Number of line items (to explain an unmeetable limit).
    LineItems,
}

/// A solved program, in the indices of `Prepared`.
#[derive(Debug, Clone)]
pub(crate) struct Solved {
    /// Per channel, the original index of its chosen option.
    pub choice: Vec<usize>,
    /// Per transistor class with devices_per_package >= 2: (pattern, packages using it).
    pub packages: BTreeMap<usize, Vec<(Vec<u32>, u32)>>,
    /// Per helper kind (single class, classes whose spares it may take), per array
    /// class: helpers placed in spare devices rather than bought as singles.
    pub helpers_in_spares: BTreeMap<HelperKind, BTreeMap<usize, u32>>,
    pub variables: usize,
    pub constraints: usize,
}

/// Loose helpers that are interchangeable: (single class, allowed spare classes).
pub(crate) type HelperKind = (usize, Vec<usize>);

struct ClassVars {
    d: u32,
    patterns: Vec<(Vec<u32>, Variable)>,
}

/// Build and solve. `Ok(None)` means infeasible (only possible through the limit).
pub(crate) fn solve(
    problem: &BoardProblem,
    prep: &Prepared,
    goal: Goal,
) -> Result<Option<Solved>, BomError> {
    let mut vars = ProblemVariables::new();
    let mut constraints: Vec<good_lp::Constraint> = Vec::new();
    let nt = problem.transistors.len();
    let boards = problem.boards as f64;

    // Choice variables: w[g][j] = channels of group g built with option j.
    let w: Vec<Vec<Variable>> = prep
        .groups
        .iter()
        .map(|g| {
            let m = g.channels.len() as f64;
            g.options
                .iter()
                .map(|_| vars.add(variable().integer().min(0).max(m)))
                .collect()
        })
        .collect();
    for (g, group) in prep.groups.iter().enumerate() {
        let sum: Expression = w[g].iter().copied().sum();
        constraints.push(sum.eq(group.channels.len() as f64));
    }

    // Demand expressions, per build of one board.
    let mut block_demand: BTreeMap<(usize, u32), Expression> = BTreeMap::new();
    let mut single_demand: Vec<Expression> = vec![Expression::from(0.0); nt];
    let mut helper_demand: BTreeMap<HelperKind, Expression> = BTreeMap::new();
    let mut resistor_qty: Vec<Expression> = vec![Expression::from(0.0); prep.resistor_items.len()];
    // Upper bounds for big-M: every copy takes the option that needs most of the item.
    let mut block_bound = vec![0u32; nt];
    let mut single_bound = vec![0u32; nt];
    let mut resistor_bound = vec![0u32; prep.resistor_items.len()];
    for (g, group) in prep.groups.iter().enumerate() {
        let copies = group.count * group.channels.len() as u32;
        let mut most_blocks = vec![0u32; nt];
        let mut most_singles = vec![0u32; nt];
        let mut most_res = vec![0u32; prep.resistor_items.len()];
        for (j, n) in group.options.iter().enumerate() {
            let c = group.count as f64;
            for &b in &n.blocks {
                *block_demand
                    .entry((n.pair_class, b))
                    .or_insert_with(|| Expression::from(0.0)) += c * w[g][j];
            }
            let mb = &mut most_blocks[n.pair_class];
            *mb = (*mb).max(n.blocks.len() as u32);
            if n.pair_singles > 0 {
                single_demand[n.pair_class] += c * n.pair_singles as f64 * w[g][j];
            }
            let mut singles_here = vec![0u32; nt];
            singles_here[n.pair_class] += n.pair_singles;
            if let Some(h) = n.helper_class {
                *helper_demand
                    .entry((h, n.helper_spares.clone()))
                    .or_insert_with(|| Expression::from(0.0)) +=
                    c * n.loose_helpers as f64 * w[g][j];
                singles_here[h] += n.loose_helpers;
            }
            for t in 0..nt {
                most_singles[t] = most_singles[t].max(singles_here[t]);
            }
            for &(item, count) in &n.resistors {
                resistor_qty[item] += c * count as f64 * w[g][j];
                most_res[item] = most_res[item].max(count);
            }
        }
        for t in 0..nt {
            block_bound[t] += copies * most_blocks[t];
            single_bound[t] += copies * most_singles[t];
        }
        for r in 0..most_res.len() {
            resistor_bound[r] += copies * most_res[r];
        }
    }

    // Packages by pattern, for every array class some option puts blocks in.
    let mut classes: BTreeMap<usize, ClassVars> = BTreeMap::new();
    for (t, part) in problem.transistors.iter().enumerate() {
        let sizes: Vec<u32> = block_demand
            .keys()
            .filter(|(c, _)| *c == t)
            .map(|&(_, s)| s)
            .collect();
        if sizes.is_empty() {
            continue;
        }
        let d = part.devices_per_package;
        let pats = patterns(&sizes, d)
            .into_iter()
            .map(|p| {
                let v = vars.add(variable().integer().min(0).max(block_bound[t] as f64));
                (p, v)
            })
            .collect();
        classes.insert(t, ClassVars { d, patterns: pats });
    }
    for (&(t, size), demand) in &block_demand {
        let supplied: Expression = classes[&t]
            .patterns
            .iter()
            .map(|(p, v)| p.iter().filter(|&&s| s == size).count() as f64 * *v)
            .sum();
        constraints.push(supplied.eq(demand.clone()));
    }

    // Helpers in spare devices (z, per helper kind and array class) and singles (n).
    let spare_of = |cv: &ClassVars| -> Expression {
        cv.patterns
            .iter()
            .map(|(p, v)| (cv.d - p.iter().sum::<u32>()) as f64 * *v)
            .sum()
    };
    let mut z: BTreeMap<HelperKind, BTreeMap<usize, Variable>> = BTreeMap::new();
    for (kind, demand) in &helper_demand {
        let per_class: BTreeMap<usize, Variable> = kind
            .1
            .iter()
            .filter(|c| classes.contains_key(c))
            .map(|&c| {
                let bound = single_bound[kind.0] as f64;
                (c, vars.add(variable().integer().min(0).max(bound)))
            })
            .collect();
        if per_class.is_empty() {
            continue;
        }
        let placed: Expression = per_class.values().map(|&v| Expression::from(v)).sum();
        constraints.push(placed.leq(demand.clone()));
        z.insert(kind.clone(), per_class);
    }
    for (&c, cv) in &classes {
        let used: Vec<Variable> = z.values().filter_map(|m| m.get(&c).copied()).collect();
        if !used.is_empty() {
            let used: Expression = used.into_iter().map(Expression::from).sum();
            constraints.push(used.leq(spare_of(cv)));
        }
    }
    let mut singles: BTreeMap<usize, Variable> = BTreeMap::new();
    for t in 0..nt {
        if single_bound[t] == 0 {
            continue;
        }
        let n = vars.add(variable().integer().min(0).max(single_bound[t] as f64));
        let mut need = single_demand[t].clone();
        for (kind, demand) in helper_demand.iter().filter(|(k, _)| k.0 == t) {
            need += demand.clone();
            for &v in z.get(kind).into_iter().flat_map(|m| m.values()) {
                need -= v;
            }
        }
        constraints.push(Expression::from(n).geq(need));
        singles.insert(t, n);
    }

    // Quantity per board of each line item, its bound and its indicator u.
    let mut items: Vec<(Part, Expression, u32)> = Vec::new();
    for t in 0..nt {
        let mut qty = Expression::from(0.0);
        let mut bound = 0;
        if let Some(cv) = classes.get(&t) {
            qty += cv.patterns.iter().map(|(_, v)| *v).sum::<Expression>();
            bound += block_bound[t];
        }
        if let Some(&n) = singles.get(&t) {
            qty += n;
            bound += single_bound[t];
        }
        if bound > 0 {
            items.push((Part::Transistor(t), qty, bound));
        }
    }
    for (r, qty) in resistor_qty.into_iter().enumerate() {
        items.push((Part::Resistor(r), qty, resistor_bound[r]));
    }
    let mut u: BTreeMap<Part, Variable> = BTreeMap::new();
    let mut objective = Expression::from(0.0);
    let mut line_items = Expression::from(0.0);
    for (part, qty, bound) in items {
        let ui = vars.add(variable().binary());
        constraints.push(qty.clone().leq(bound as f64 * ui));
        objective += boards * super::needs::unit_cost(problem, prep, part) * qty;
        objective += problem.line_item_cost * ui;
        line_items += ui;
        u.insert(part, ui);
    }
    // Tightening (valid, not needed for correctness): the channels of a group that use
    // options needing a part force that part's line item,
    // `sum_{j needs i} w[g][j] <= |g| u[i]`. The big-M rows above alone give a weak
    // relaxation; one row per (group, part) is also stronger than one per option.
    for (g, group) in prep.groups.iter().enumerate() {
        let m = group.channels.len() as f64;
        let mut users: BTreeMap<Part, Expression> = BTreeMap::new();
        for (j, n) in group.options.iter().enumerate() {
            let mut parts = vec![Part::Transistor(n.pair_class)];
            parts.extend(n.resistors.iter().map(|&(r, _)| Part::Resistor(r)));
            for p in parts {
                *users.entry(p).or_insert_with(|| Expression::from(0.0)) += w[g][j];
            }
        }
        for (p, sum) in users {
            constraints.push(sum.leq(m * u[&p]));
        }
    }
    match goal {
        Goal::Cost => {
            if let Some(limit) = problem.max_line_items {
                constraints.push(line_items.clone().leq(limit as f64));
            }
        }
        Goal::LineItems => objective = line_items.clone(),
    }

    // Start from the every-channel-on-its-own solution when it is feasible.
    let warm = warm_start(problem, prep, &w, &classes, &u, goal);

    let variables = vars.len();
    let n_constraints = constraints.len();
    let mut model = vars.minimise(objective).using(good_lp::microlp);
    for c in constraints {
        model.add_constraint(c);
    }
    if let Some(warm) = warm {
        model = model.with_initial_solution(warm);
    }
    let sol = match model.solve() {
        Ok(s) => s,
        Err(ResolutionError::Infeasible) => return Ok(None),
        Err(e) => return Err(BomError::Solver(e.to_string())),
    };
    if !matches!(sol.status(), SolutionStatus::Optimal) {
        return Err(BomError::Solver(
            "the solver stopped before proving the optimum".into(),
        ));
    }
    let int = |v: Variable| sol.value(v).round().max(0.0) as u32;

    let mut choice = vec![usize::MAX; problem.channels.len()];
    for (g, group) in prep.groups.iter().enumerate() {
        let mut slots = group.channels.iter().zip(&group.kept);
        for (j, &v) in w[g].iter().enumerate() {
            for _ in 0..int(v) {
                let (&c, kept) = slots
                    .next()
                    .ok_or_else(|| BomError::Solver("more choices than channels".into()))?;
                choice[c] = kept[j];
            }
        }
    }
    if choice.contains(&usize::MAX) {
        return Err(BomError::Solver(
            "a channel was left without a design".into(),
        ));
    }
    let packages = classes
        .iter()
        .map(|(&t, cv)| {
            let used = cv
                .patterns
                .iter()
                .map(|(p, v)| (p.clone(), int(*v)))
                .filter(|(_, n)| *n > 0)
                .collect();
            (t, used)
        })
        .collect();
    let helpers_in_spares = z
        .iter()
        .map(|(kind, m)| (kind.clone(), m.iter().map(|(&c, &v)| (c, int(v))).collect()))
        .collect();
    Ok(Some(Solved {
        choice,
        packages,
        helpers_in_spares,
        variables,
        constraints: n_constraints,
    }))
}

/// Values for the standalone solution (each channel's cheapest option on its own, every
/// copy in its own packages), when it meets the limit. Only the choice, package and
/// indicator variables are given; the rest are implied.
fn warm_start(
    problem: &BoardProblem,
    prep: &Prepared,
    w: &[Vec<Variable>],
    classes: &BTreeMap<usize, ClassVars>,
    u: &BTreeMap<Part, Variable>,
    goal: Goal,
) -> Option<Vec<(Variable, f64)>> {
    if goal != Goal::Cost {
        return None;
    }
    let mut values = Vec::new();
    let mut used: BTreeMap<Part, bool> = BTreeMap::new();
    let mut pattern_counts: BTreeMap<(usize, Vec<u32>), f64> = BTreeMap::new();
    for (g, group) in prep.groups.iter().enumerate() {
        let cost = |j: usize| -> f64 {
            standalone_parts(problem, &group.options[j])
                .iter()
                .map(|&(p, q)| super::needs::unit_cost(problem, prep, p) * q as f64)
                .sum()
        };
        let best = (0..group.options.len()).min_by(|&a, &b| cost(a).total_cmp(&cost(b)))?;
        for (j, &v) in w[g].iter().enumerate() {
            let n = if j == best { group.channels.len() } else { 0 };
            values.push((v, n as f64));
        }
        let n = &group.options[best];
        let copies = (group.count as usize * group.channels.len()) as f64;
        // Standalone packing of one copy, as patterns: a copy's blocks fill packages
        // greedily (largest first), which is the exact packing for a copy's few blocks.
        if let Some(cv) = classes.get(&n.pair_class) {
            let mut bins: Vec<Vec<u32>> = Vec::new();
            for &b in &n.blocks {
                match bins
                    .iter_mut()
                    .find(|bin| bin.iter().sum::<u32>() + b <= cv.d)
                {
                    Some(bin) => bin.push(b),
                    None => bins.push(vec![b]),
                }
            }
            for bin in bins {
                *pattern_counts.entry((n.pair_class, bin)).or_default() += copies;
            }
        }
        for (p, _) in standalone_parts(problem, n) {
            used.insert(p, true);
        }
    }
    if let (Goal::Cost, Some(limit)) = (goal, problem.max_line_items) {
        if used.len() > limit as usize {
            return None;
        }
    }
    for (t, cv) in classes {
        for (p, v) in &cv.patterns {
            let n = pattern_counts.get(&(*t, p.clone())).copied().unwrap_or(0.0);
            values.push((*v, n));
        }
    }
    for (p, &v) in u {
        values.push((v, if used.contains_key(p) { 1.0 } else { 0.0 }));
    }
    Some(values)
}
