//! Genetic programming over lists of expression trees, with a Pareto archive of
//! (complexity, cost).
//!
//! Seeded and deterministic: every random choice of generation g, slot i comes from a
//! ChaCha8 stream keyed by (seed, g, i), and evaluation (in parallel with rayon) only
//! reads the shared linearized problem, so results do not depend on the thread count.

use super::linearized::{Problem, Solution};
use crate::expr::{parse, Node};
use crate::termination::Termination;
use rand_chacha::ChaCha8Rng;
use rand_core::{Rng, SeedableRng};
use rayon::prelude::*;
use std::collections::{BTreeMap, HashMap};
use std::time::{Duration, Instant};

/// A candidate model: a list of trees (the library columns) and starting constants.
#[derive(Clone, Debug, PartialEq)]
pub struct Individual {
    /// Vector-valued formulas.
    pub trees: Vec<Node>,
    /// Starting values of k0, k1, …
    pub k: Vec<f64>,
}

impl Individual {
    fn key(&self) -> String {
        let mut s: Vec<String> = self
            .trees
            .iter()
            .map(|t| t.simplify().to_string())
            .collect();
        s.sort();
        format!(
            "{}|{:?}",
            s.join(";"),
            self.k.iter().map(|v| v.to_bits()).collect::<Vec<_>>()
        )
    }
}

/// Options of the search.
#[derive(Clone, Debug)]
pub struct SearchOptions {
    /// Individuals per generation.
    pub population: usize,
    /// Most generations.
    pub generations: usize,
    /// Seed.
    pub seed: u64,
    /// Significance a coefficient needs to stay, |c|/σ.
    pub threshold: f64,
    /// Most trees in an individual.
    pub max_terms: usize,
    /// Most nodes in a tree.
    pub max_nodes: usize,
    /// Wall-clock budget; the search stops at the end of the generation that exceeds it
    /// (then the result depends on the machine's speed; the default has none).
    pub time_limit: Option<Duration>,
    /// Span of the training arc, s (scales the starting time constants).
    pub span_s: f64,
}

impl Default for SearchOptions {
    fn default() -> Self {
        Self {
            population: 96,
            generations: 12,
            seed: 1,
            threshold: 5.0,
            max_terms: 3,
            max_nodes: 24,
            time_limit: None,
            span_s: 86400.0,
        }
    }
}

/// Progress of a search.
pub trait SearchObserver: Sync {
    /// After each generation.
    fn on_generation(
        &self,
        _generation: usize,
        _generations: usize,
        _best_cost: f64,
        _front: usize,
        _evals_per_s: f64,
    ) {
    }
}

/// An observer that reports one seed's generations as part of all seeds'.
struct Counted<'a> {
    inner: &'a dyn SearchObserver,
    before: usize,
    total: usize,
}

impl SearchObserver for Counted<'_> {
    fn on_generation(&self, g: usize, _: usize, best: f64, front: usize, rate: f64) {
        self.inner
            .on_generation(self.before + g, self.total, best, front, rate);
    }
}

/// An observer that ignores everything.
pub struct QuietSearch;
impl SearchObserver for QuietSearch {}

/// What the search found.
#[derive(Clone, Debug)]
pub struct SearchResult {
    /// Best solution at each complexity that beats every simpler one (the Pareto front),
    /// by increasing complexity.
    pub front: Vec<Solution>,
    /// Candidate evaluations (solves) made; with several seeds, each candidate is
    /// counted by the first seed that met it.
    pub evaluations: usize,
    /// Generations run.
    pub generations: usize,
    /// Wall time, s.
    pub seconds: f64,
    /// Why it stopped.
    pub termination: Termination,
}

const VECTORS: [&str; 5] = ["R", "T", "N", "vrel / norm(vrel)", "lit * sun"];
const MODULATORS: [&str; 10] = [
    "1",
    "exp(-t / k0)",
    "cos(u)",
    "sin(u)",
    "t",
    "rho * norm(vrel)^2",
    "exp(-((t - k0) / k1)^2)",
    "exp(-((t - k0) / k1)^2) * rho * norm(vrel)^2",
    "t * rho * norm(vrel)^2",
    "lit",
];

/// The seed library: physically plain single-term candidates, and the periodic and
/// switch-on blocks with their scanned timing ([`super::timing`]).
fn library(problem: &Problem, span: f64) -> Vec<Individual> {
    let mut out = plain_library(span);
    out.extend(super::timing::scan(problem, span).seeds);
    out
}

/// The library's single-term candidates with fixed starting constants.
fn plain_library(span: f64) -> Vec<Individual> {
    let mut out = Vec::new();
    for m in MODULATORS {
        for v in VECTORS {
            let text = if m == "1" {
                v.to_string()
            } else {
                format!("{m} * ({v})")
            };
            let Ok(node) = parse(&text) else { continue };
            let ks: Vec<Vec<f64>> = if m.contains("k1") {
                vec![vec![0.3 * span, 0.15 * span], vec![0.6 * span, 0.15 * span]]
            } else if m.contains("k0") {
                vec![vec![0.25 * span]]
            } else {
                vec![vec![]]
            };
            for k in ks {
                out.push(Individual {
                    trees: vec![node.clone()],
                    k,
                });
            }
        }
    }
    out
}

struct Gen<'a> {
    rng: ChaCha8Rng,
    lib: &'a [Individual],
}

impl Gen<'_> {
    fn below(&mut self, n: usize) -> usize {
        (self.rng.next_u64() % n.max(1) as u64) as usize
    }
    fn unit(&mut self) -> f64 {
        (self.rng.next_u64() >> 11) as f64 / (1u64 << 53) as f64
    }
    fn normal(&mut self) -> f64 {
        let u1 = self.unit().max(1e-300);
        let u2 = self.unit();
        (-2.0 * u1.ln()).sqrt() * (std::f64::consts::TAU * u2).cos()
    }
}

/// Paths to every node of `n` (child indices from the root), with their types.
fn paths(n: &Node, prefix: &mut Vec<usize>, out: &mut Vec<(Vec<usize>, crate::expr::Ty)>) {
    if let Ok(t) = n.ty() {
        out.push((prefix.clone(), t));
    }
    for (i, c) in n.children().into_iter().enumerate() {
        prefix.push(i);
        paths(c, prefix, out);
        prefix.pop();
    }
}

// Paths always come from `paths()` on the same tree, so every step exists.
#[allow(clippy::expect_used)]
fn at_mut<'a>(n: &'a mut Node, path: &[usize]) -> &'a mut Node {
    let mut cur = n;
    for &i in path {
        cur = cur.children_mut().into_iter().nth(i).expect("valid path");
    }
    cur
}

#[allow(clippy::expect_used)]
fn at<'a>(n: &'a Node, path: &[usize]) -> &'a Node {
    let mut cur = n;
    for &i in path {
        cur = cur.children().into_iter().nth(i).expect("valid path");
    }
    cur
}

fn random_path(g: &mut Gen, n: &Node, ty: Option<crate::expr::Ty>) -> Option<Vec<usize>> {
    let mut all = Vec::new();
    paths(n, &mut Vec::new(), &mut all);
    let ok: Vec<Vec<usize>> = all
        .into_iter()
        .filter(|(_, t)| ty.is_none_or(|w| *t == w))
        .map(|(p, _)| p)
        .collect();
    if ok.is_empty() {
        None
    } else {
        let i = g.below(ok.len());
        Some(ok[i].clone())
    }
}

/// A same-type, same-arity replacement for a node (point mutation): a terminal from its
/// group, a jittered number, or an operator's sibling (the tables in `expr::ops`).
fn point_mutate(g: &mut Gen, n: &Node) -> Node {
    match n {
        Node::Term(t) => {
            let group = t.mutation_group();
            if group.is_empty() {
                n.clone()
            } else {
                Node::Term(group[g.below(group.len())])
            }
        }
        // Two significant digits: a literal a reader can take in (`41`, not `40.96337…`).
        Node::Const(c) => Node::Const(two_digits(c * (0.5 * g.normal()).exp())),
        Node::Param(_) => n.clone(),
        Node::Unary(op, a) => Node::Unary(op.sibling().unwrap_or(*op), a.clone()),
        Node::Binary(op, a, b) => Node::Binary(op.sibling().unwrap_or(*op), a.clone(), b.clone()),
    }
}

/// `x` rounded to two significant digits.
fn two_digits(x: f64) -> f64 {
    if x == 0.0 || !x.is_finite() {
        return x;
    }
    let scale = 10f64.powi(1 - x.abs().log10().floor() as i32);
    (x * scale).round() / scale
}

/// Breed one child from the current generation's survivors.
fn breed(g: &mut Gen, parents: &[Individual], opts: &SearchOptions) -> Individual {
    let pick = |g: &mut Gen| parents[g.below(parents.len())].clone();
    let mut child = pick(g);
    let op = g.below(100);
    match op {
        // Subtree crossover between trees of matching type.
        0..=29 => {
            let other = pick(g);
            if !child.trees.is_empty() && !other.trees.is_empty() {
                let ti = g.below(child.trees.len());
                let donor = &other.trees[g.below(other.trees.len())];
                if let Some(pd) = random_path(g, donor, None) {
                    let sub = at(donor, &pd).clone();
                    if let Ok(ty) = sub.ty() {
                        if let Some(pc) = random_path(g, &child.trees[ti], Some(ty)) {
                            *at_mut(&mut child.trees[ti], &pc) = sub;
                        }
                    }
                }
                if other.k.len() > child.k.len() {
                    child.k.extend_from_slice(&other.k[child.k.len()..]);
                }
            }
        }
        // Point mutation.
        30..=44 => {
            if !child.trees.is_empty() {
                let ti = g.below(child.trees.len());
                if let Some(p) = random_path(g, &child.trees[ti], None) {
                    let node = at_mut(&mut child.trees[ti], &p);
                    *node = point_mutate(g, node);
                }
            }
        }
        // Hoist: a tree replaced by one of its vector subtrees.
        45..=51 => {
            if !child.trees.is_empty() {
                let ti = g.below(child.trees.len());
                if let Some(p) = random_path(g, &child.trees[ti], Some(crate::expr::Ty::Vector)) {
                    child.trees[ti] = at(&child.trees[ti], &p).clone();
                }
            }
        }
        // Grow: a modulator wrapped around a vector subtree.
        52..=61 => {
            if !child.trees.is_empty() {
                let ti = g.below(child.trees.len());
                let m = MODULATORS[1 + g.below(MODULATORS.len() - 1)];
                if let (Ok(mnode), Some(p)) = (
                    crate::expr::parse::parse_any(m),
                    random_path(g, &child.trees[ti], Some(crate::expr::Ty::Vector)),
                ) {
                    let slot = at_mut(&mut child.trees[ti], &p);
                    *slot = Node::binary(crate::expr::Op2::Mul, mnode, slot.clone());
                    if child.k.len() < 2 {
                        child.k.resize(2, 0.3 * opts.span_s);
                    }
                }
            }
        }
        // Constant jitter.
        62..=73 => {
            for k in &mut child.k {
                *k *= (0.4 * g.normal()).exp();
            }
        }
        // Add a tree from the library (its constants renumbered after the child's).
        74..=87 => {
            if child.trees.len() < opts.max_terms {
                let l = &g.lib[g.below(g.lib.len())];
                if let Some(tree) = with_own_constants(&mut child.k, l) {
                    child.trees.push(tree);
                }
            }
        }
        // Drop a tree.
        88..=93 => {
            if child.trees.len() > 1 {
                let i = g.below(child.trees.len());
                child.trees.remove(i);
            }
        }
        // Swap a tree for a library one.
        _ => {
            if !child.trees.is_empty() {
                let i = g.below(child.trees.len());
                let l = &g.lib[g.below(g.lib.len())];
                if let Some(tree) = with_own_constants(&mut child.k, l) {
                    child.trees[i] = tree;
                }
            }
        }
    }
    child.trees.retain(|t| t.complexity() <= opts.max_nodes);
    if child.trees.is_empty() {
        child = pick(g);
    }
    child
}

/// Most constants a model may use (`k0`…`k9`).
const MAX_CONSTANTS: usize = 10;

/// A library member's tree, its constants appended to `k` and renumbered to match, so
/// that a period and an onset in one model are separate constants; `None` when the model
/// would need more than [`MAX_CONSTANTS`].
fn with_own_constants(k: &mut Vec<f64>, l: &Individual) -> Option<Node> {
    let tree = &l.trees[0];
    let needs = tree.n_params();
    if needs == 0 {
        return Some(tree.clone());
    }
    let offset = k.len();
    if offset + needs > MAX_CONSTANTS {
        return None;
    }
    k.extend(
        l.k.iter()
            .copied()
            .chain(std::iter::repeat(1.0))
            .take(needs),
    );
    Some(tree.shift_params(offset))
}

fn score(s: &Solution, m: usize) -> f64 {
    s.cost * (1.0 + 0.02 * s.complexity as f64) + s.complexity as f64 * (m as f64).ln()
}

fn stream(seed: u64, generation: usize, slot: usize) -> ChaCha8Rng {
    let mut key = seed ^ 0x9e37_79b9_7f4a_7c15;
    key = key.wrapping_mul(0xbf58_476d_1ce4_e5b9)
        ^ (generation as u64).wrapping_mul(0x94d0_49bb_1331_11eb);
    key ^= (slot as u64).wrapping_mul(0x2545_f491_4f6c_dd1d);
    ChaCha8Rng::seed_from_u64(key)
}

/// Candidates already solved, by key: a candidate's solution depends only on the
/// problem and on the candidate, so every seed's search shares them.
type Memo = HashMap<String, Option<Solution>>;

/// Runs the search on `problem` with `opts.seed`.
pub fn search(
    problem: &Problem,
    opts: &SearchOptions,
    observer: &dyn SearchObserver,
) -> SearchResult {
    let lib = library(problem, opts.span_s);
    search_from(problem, opts, &lib, &mut Memo::new(), observer)
}

/// Runs the search once per seed in `seeds` (each as [`search`] with that seed would),
/// sharing the library's timing scan and every candidate already solved.
pub fn search_seeds(
    problem: &Problem,
    opts: &SearchOptions,
    seeds: &[u64],
    observer: &dyn SearchObserver,
) -> Vec<SearchResult> {
    let timing = super::timing::scan(problem, opts.span_s);
    search_seeds_with(problem, opts, seeds, &timing, observer)
}

/// [`search_seeds`] with the timing scan already done.
pub fn search_seeds_with(
    problem: &Problem,
    opts: &SearchOptions,
    seeds: &[u64],
    timing: &super::timing::Timing,
    observer: &dyn SearchObserver,
) -> Vec<SearchResult> {
    let mut lib = plain_library(opts.span_s);
    lib.extend(timing.seeds.iter().cloned());
    let mut memo = Memo::new();
    let total = opts.generations.max(1) * seeds.len();
    seeds
        .iter()
        .enumerate()
        .map(|(i, &seed)| {
            let o = SearchOptions {
                seed,
                ..opts.clone()
            };
            // Progress counts the generations of every seed as one run.
            let counted = Counted {
                inner: observer,
                before: i * opts.generations.max(1),
                total,
            };
            search_from(problem, &o, &lib, &mut memo, &counted)
        })
        .collect()
}

fn search_from(
    problem: &Problem,
    opts: &SearchOptions,
    lib: &[Individual],
    seen: &mut Memo,
    observer: &dyn SearchObserver,
) -> SearchResult {
    let started = Instant::now();
    let m = problem.rows();
    let mut population: Vec<Individual> = lib.to_vec();
    let mut archive: BTreeMap<usize, Solution> = BTreeMap::new();
    let mut visited = std::collections::HashSet::new();
    let mut evaluations = 0;
    let mut generations = 0;
    let mut termination = Termination::Generations;
    for gen in 0..opts.generations.max(1) {
        generations = gen + 1;
        // This run's new individuals, in population order; solved in parallel unless
        // another seed's run already solved them.
        let mut new: Vec<(String, Individual)> = Vec::new();
        for ind in &population {
            let k = ind.key();
            if visited.insert(k.clone()) {
                new.push((k, ind.clone()));
            }
        }
        let to_solve: Vec<&(String, Individual)> =
            new.iter().filter(|(k, _)| !seen.contains_key(k)).collect();
        let solved: Vec<Option<Solution>> = to_solve
            .par_iter()
            .map(|(_, ind)| problem.solve(&ind.trees, &ind.k, opts.threshold))
            .collect();
        evaluations += to_solve.len();
        for ((k, _), s) in to_solve.into_iter().zip(solved) {
            seen.insert(k.clone(), s);
        }
        for (k, _) in &new {
            if let Some(Some(sol)) = seen.get(k) {
                let better = archive
                    .get(&sol.complexity)
                    .is_none_or(|b| sol.cost < b.cost);
                if better {
                    archive.insert(sol.complexity, sol.clone());
                }
            }
        }
        // Survivors: best by penalized score (ties broken by key, for determinism).
        let mut ranked: Vec<(f64, String, Individual)> = population
            .iter()
            .filter_map(|ind| {
                let k = ind.key();
                seen.get(&k)
                    .and_then(|s| s.as_ref())
                    .map(|s| (score(s, m), k, ind.clone()))
            })
            .collect();
        ranked.sort_by(|a, b| a.0.total_cmp(&b.0).then_with(|| a.1.cmp(&b.1)));
        ranked.dedup_by(|a, b| a.1 == b.1);
        let best_cost = archive
            .values()
            .map(|s| s.cost)
            .fold(f64::INFINITY, f64::min);
        let front = pareto(&archive).len();
        let rate = evaluations as f64 / started.elapsed().as_secs_f64().max(1e-9);
        observer.on_generation(generations, opts.generations, best_cost, front, rate);
        if gen + 1 == opts.generations {
            termination = Termination::Generations;
            break;
        }
        if opts.time_limit.is_some_and(|l| started.elapsed() > l) {
            termination = Termination::TimeLimit;
            break;
        }
        let survivors: Vec<Individual> = ranked
            .iter()
            .take((opts.population / 4).max(4))
            .map(|r| r.2.clone())
            .collect();
        if survivors.is_empty() {
            termination = Termination::NoSurvivors;
            break;
        }
        // Next generation: elites, then children, each from its own random stream.
        let mut next: Vec<Individual> = survivors
            .iter()
            .take(opts.population / 8 + 1)
            .cloned()
            .collect();
        let n_children = opts.population.saturating_sub(next.len());
        let children: Vec<Individual> = (0..n_children)
            .map(|slot| {
                let mut g = Gen {
                    rng: stream(opts.seed, gen, slot),
                    lib,
                };
                breed(&mut g, &survivors, opts)
            })
            .collect();
        next.extend(children);
        population = next;
    }
    SearchResult {
        front: pareto(&archive),
        evaluations,
        generations,
        seconds: started.elapsed().as_secs_f64(),
        termination,
    }
}

/// The archive entries not dominated by a simpler one.
pub(super) fn pareto(archive: &BTreeMap<usize, Solution>) -> Vec<Solution> {
    let mut out: Vec<Solution> = Vec::new();
    for s in archive.values() {
        if out.last().is_none_or(|b| s.cost < b.cost) {
            out.push(s.clone());
        }
    }
    out
}

#[cfg(test)]
mod tests {
    use super::two_digits;

    #[test]
    fn jittered_literals_keep_two_significant_digits() {
        assert_eq!(two_digits(40.963378353988794), 41.0);
        assert_eq!(two_digits(-0.0012345), -0.0012);
        assert_eq!(two_digits(98765.0), 99000.0);
        assert_eq!(two_digits(0.0), 0.0);
    }
}
