//! Exact penalised change-point search: PELT with a bound tree for long segments ([`pelt`]),
//! PELT as published ([`pelt_pruned`]), a ruptures-compatible PELT and the unpruned optimal
//! partitioning they must all agree with.
//!
//! All three minimise `Σ_segments C(segment) + β · (number of change points)` over segmentations
//! whose segments have at least `min_size` samples. PELT (Killick, Fearnhead & Eckley 2012,
//! JASA 107:1590-1598) gives the same optimum as optimal partitioning (Jackson et al. 2005) but
//! discards candidate last change points that can never again be optimal, which makes it close
//! to linear in the series length when change points are sparse.

use super::cost::SegmentCost;
use super::StatsError;
use crate::tol;

/// An optimal segmentation: the segment ends (the last one is the series length, as in
/// ruptures) and the minimised objective `Σ C + β · (segments − 1)`.
#[derive(Debug, Clone, PartialEq)]
pub struct Segmentation {
    /// Sorted segment ends; `breakpoints.last()` is the number of samples.
    pub breakpoints: Vec<usize>,
    /// The penalised objective at the optimum.
    pub objective: f64,
}

impl Segmentation {
    /// The change points: the segment ends without the final one (sample indices where a new
    /// segment starts).
    pub fn change_points(&self) -> &[usize] {
        &self.breakpoints[..self.breakpoints.len().saturating_sub(1)]
    }

    /// The segments as `(start, end)` sample ranges.
    pub fn segments(&self) -> Vec<(usize, usize)> {
        let mut start = 0;
        self.breakpoints
            .iter()
            .map(|&end| {
                let seg = (start, end);
                start = end;
                seg
            })
            .collect()
    }
}

fn check_search(n: usize, penalty: f64, min_size: usize) -> Result<(), StatsError> {
    if !(penalty.is_finite() && penalty >= 0.0) {
        return Err(StatsError::InvalidParameter {
            name: "penalty",
            value: penalty,
            expected: "a finite number >= 0",
        });
    }
    if min_size == 0 {
        return Err(StatsError::InvalidParameter {
            name: "minimum segment length",
            value: 0.0,
            expected: "at least 1 sample",
        });
    }
    if n < min_size {
        return Err(StatsError::TooFewSamples {
            what: "a segmentation with this minimum segment length",
            needed: min_size,
            got: n,
        });
    }
    Ok(())
}

/// Follows the stored last change points back from the end of the series.
fn backtrack(last: &[usize], n: usize) -> Vec<usize> {
    let mut ends = vec![n];
    let mut end = n;
    while last[end] > 0 {
        end = last[end];
        ends.push(end);
    }
    ends.reverse();
    ends
}

/// The live candidate last change points of PELT, struct-of-arrays for a tight inner loop.
#[derive(Default)]
struct Candidates {
    starts: Vec<usize>,
    /// `F(start)`, copied next to the start for locality.
    base: Vec<f64>,
    /// First segment end from which the start can no longer be optimal (`usize::MAX`: never).
    retired_from: Vec<usize>,
    totals: Vec<f64>,
}

impl Candidates {
    fn push(&mut self, start: usize, base: f64) {
        self.starts.push(start);
        self.base.push(base);
        self.retired_from.push(usize::MAX);
        self.totals.push(0.0);
    }

    /// Evaluates `F(t) + C(t, end) + β` for every candidate; returns the first minimum.
    fn evaluate<C: SegmentCost>(&mut self, cost: &C, end: usize, penalty: f64) -> (f64, usize) {
        cost.costs_to(&self.starts, end, &mut self.totals);
        let (mut min_total, mut argmin) = (f64::INFINITY, 0);
        for ((&start, &base), total) in self.starts.iter().zip(&self.base).zip(&mut self.totals) {
            *total = base + *total + penalty;
            if *total < min_total {
                (min_total, argmin) = (*total, start);
            }
        }
        (min_total, argmin)
    }

    /// Marks the starts with `F(t) + C(t, end) > F(end)` as retired from `end + min_size` and
    /// drops those already retired at `end + 1`.
    fn prune(&mut self, limit: f64, end: usize, min_size: usize) {
        let mut kept = 0;
        for i in 0..self.starts.len() {
            if self.totals[i] > limit && self.retired_from[i] == usize::MAX {
                self.retired_from[i] = end + min_size;
            }
            if self.retired_from[i] > end + 1 {
                self.starts[kept] = self.starts[i];
                self.base[kept] = self.base[i];
                self.retired_from[kept] = self.retired_from[i];
                kept += 1;
            }
        }
        self.starts.truncate(kept);
        self.base.truncate(kept);
        self.retired_from.truncate(kept);
        self.totals.truncate(kept);
    }
}

/// The exact penalised search ([`pelt_pruned`]'s optimum and breakpoints, ties to the earliest
/// last change point) in O(n log n) cost evaluations when segments are long.
///
/// Same recursion `F(s) = min_t F(t) + C(t, s) + β`, but the candidate starts are grouped in a
/// fixed dyadic tree (leaves of [`LEAF_STARTS`] starts). A node holding the starts `[a, b)`
/// stores `M = min_t F(t) + C(t, b)` once all of them are admissible. Because a split never
/// raises the cost, `C(t, s) >= C(t, b) + C(b, s)` for `t < b <= s`, so
/// `M + C(b, s) + β` is a lower bound on every total in the node: a node whose bound exceeds the
/// best total found so far (the previous end's argmin is evaluated first) is skipped whole, and
/// only nodes that might hold the minimum are opened down to their starts. This is the bounding
/// step of branch and bound (Land & Doig 1960, Econometrica 28:497-520) applied to the
/// optimal-partitioning recursion (Jackson et al. 2005) with the superadditivity PELT's
/// pruning rests on (Killick, Fearnhead & Eckley 2012, section 3).
///
/// Why it helps where PELT does not: inside a homogeneous stretch that began at `c`, the bound
/// of a node `[a, b)` exceeds the total of `c` by `β − G(c, t*, b) − G(c, b, s)` (two split
/// gains, each about a chi-square on clean data), so with a calibrated β nearly every node is
/// skipped at the top of the tree, whatever the stretch length. Nodes before a change point are
/// skipped because their bound carries the cost of the change. The bound only drops rounding
/// when it is larger than the best total by more than [`tol::PELT_BOUND_SLACK_REL`] of the
/// magnitudes involved, so every start that could tie is evaluated with the same arithmetic as
/// [`pelt_pruned`].
///
/// Tails are evaluated lazily: a child's tail is first bounded below by its right sibling's own
/// cost plus the parent's tail (superadditivity again), and evaluated only when that bound
/// does not rule the child out. Below the covering nodes (whose tails are evaluated together
/// at each end), a node holding the previous end's argmin is opened without testing its exact
/// bound: while the incumbent is that start's total the bound cannot rule it out, and once a
/// better start lowered the incumbent, opening it only evaluates starts that cannot win or tie.
/// When its children's lower bounds stop ruling them out, both their tails (the left child's,
/// and its own, which the right child shares) are evaluated in one lockstep pair. On a
/// 100,000-sample
/// series without change the separate chains of evaluation per end (single costs plus lockstep
/// groups) went from 23 to 8, and the search time nearly halved (docs/benchmarks.md).
pub fn pelt<C: SegmentCost>(
    cost: &C,
    penalty: f64,
    min_size: usize,
) -> Result<Segmentation, StatsError> {
    let n = cost.n_samples();
    check_search(n, penalty, min_size)?;
    let mut search = BoundedSearch::new(cost, penalty, n);
    for end in min_size..=n {
        // Starts `t < admissible_end` are admissible at `end` (those with a finite `F(t)`).
        let admissible_end = end - min_size + 1;
        search.complete_nodes(admissible_end);
        search.solve_end(end, admissible_end);
    }
    Ok(Segmentation {
        breakpoints: backtrack(&search.last, n),
        objective: search.best[n] - penalty,
    })
}

/// Starts per leaf of [`pelt`]'s bound tree: one lockstep batch of the four-lane segment costs.
/// Smaller leaves bound the starts more finely (fewer evaluated where the best start sits, and
/// at most three after the last complete leaf) for a few more node bounds; on the 100k audit's
/// search 16, 8, 4 and 2 took 222, 175, 153 and 155 ms (docs/benchmarks.md).
pub const LEAF_STARTS: usize = 4;

/// State of [`pelt`]: `F`, the argmins, and the node minima `M` of the bound tree.
struct BoundedSearch<'a, C> {
    cost: &'a C,
    penalty: f64,
    best: Vec<f64>,
    last: Vec<usize>,
    /// `nodes[j][k]`: `M` of node `k` of size `LEAF_STARTS << j` (infinite until complete, or
    /// when none of its starts is admissible).
    nodes: Vec<Vec<f64>>,
    /// `own[j][k]`: the cost of node `k`'s own samples, `C(node start, node end)` (set when the
    /// node completes).
    own: Vec<Vec<f64>>,
    /// The nodes covering the admissible starts at the current end, oldest first.
    cover: Vec<(usize, usize)>,
    /// The starts of the costs [`solve_end`](Self::solve_end) evaluates together, and their
    /// costs.
    tails: Vec<usize>,
    tail_costs: Vec<f64>,
    /// Magnitude of the costs, for the rounding slack of the bound.
    scale: f64,
    previous_argmin: usize,
    starts: Vec<usize>,
    totals: Vec<f64>,
}

/// The best total found so far at one end, and its start.
#[derive(Clone, Copy)]
struct Incumbent {
    total: f64,
    start: usize,
}

impl Incumbent {
    fn offer(&mut self, total: f64, start: usize) {
        // An exact tie goes to the earlier start, as in the published search.
        let better = match total.partial_cmp(&self.total) {
            Some(std::cmp::Ordering::Less) => true,
            Some(std::cmp::Ordering::Equal) => start < self.start,
            _ => false,
        };
        if better {
            (self.total, self.start) = (total, start);
        }
    }
}

impl<'a, C: SegmentCost> BoundedSearch<'a, C> {
    fn new(cost: &'a C, penalty: f64, n: usize) -> Self {
        let mut levels = 1;
        while LEAF_STARTS << (levels - 1) < n + 1 {
            levels += 1;
        }
        let nodes: Vec<Vec<f64>> = (0..levels)
            .map(|j| vec![f64::INFINITY; (n + 1) / (LEAF_STARTS << j) + 1])
            .collect();
        let own = nodes.iter().map(|level| vec![0.0; level.len()]).collect();
        let mut best = vec![f64::INFINITY; n + 1];
        best[0] = 0.0;
        Self {
            cost,
            penalty,
            best,
            last: vec![0; n + 1],
            nodes,
            own,
            cover: Vec::with_capacity(levels),
            tails: Vec::with_capacity(levels + 2),
            tail_costs: Vec::with_capacity(levels + 2),
            scale: cost.cost(0, n).abs(),
            previous_argmin: 0,
            starts: Vec::with_capacity(LEAF_STARTS << (levels - 1)),
            totals: Vec::new(),
        }
    }

    /// `C(from, to)`, zero for an empty range.
    fn cost_between(&self, from: usize, to: usize) -> f64 {
        if to > from {
            self.cost.cost(from, to)
        } else {
            0.0
        }
    }

    /// Stores `M` of the nodes whose last start became admissible (they end at `admissible_end`).
    /// A leaf evaluates its starts; a larger node takes the `M` of its right child (which ends
    /// at the same place, so it was just stored) and searches its left child by the same bound
    /// as [`visit`](Self::visit), which yields the same minimum with far fewer evaluations.
    fn complete_nodes(&mut self, admissible_end: usize) {
        for j in 0..self.nodes.len() {
            let size = LEAF_STARTS << j;
            if !admissible_end.is_multiple_of(size) {
                break;
            }
            let k = admissible_end / size - 1;
            self.own[j][k] = self.cost_between(k * size, admissible_end);
            self.nodes[j][k] = if j == 0 {
                self.minimum_total(k * size..admissible_end, admissible_end)
                    .map_or(f64::INFINITY, |m| m.total)
            } else {
                // The left child's tail at this end is the right child's own cost.
                let mut minimum = self.nodes[j - 1][2 * k + 1];
                let tail = Tail::Exact(self.own[j - 1][2 * k + 1]);
                self.subtree_minimum(j - 1, 2 * k, admissible_end, &mut minimum, tail);
                minimum
            };
        }
    }

    /// Whether a lower bound exceeds `reference` by more than rounding could explain.
    fn rules_out(&self, bound: f64, reference: f64) -> bool {
        bound > reference + self.slack(bound, reference)
    }

    /// How far a lower bound may exceed `reference` by rounding alone.
    fn slack(&self, bound: f64, reference: f64) -> f64 {
        tol::PELT_BOUND_SLACK_REL * (1.0 + self.scale + bound.abs() + reference.abs())
    }

    /// The exact tail `C(node_end, end)` of a node whose bound with `tail` did not rule it out
    /// (evaluated only when `tail` is a lower bound); `None` when the bound with the exact tail,
    /// `bound_of(exact)`, rules the node out against `reference`.
    fn exact_tail(
        &self,
        tail: Tail,
        node_end: usize,
        end: usize,
        bound_of: impl Fn(f64) -> f64,
        reference: f64,
    ) -> Option<f64> {
        match tail {
            Tail::Exact(t) => Some(t),
            Tail::AtLeast(_) => {
                let exact = self.cost_between(node_end, end);
                (!self.rules_out(bound_of(exact), reference)).then_some(exact)
            }
        }
    }

    /// Lowers `minimum` to the smallest `F(t) + C(t, end)` over the admissible starts of node `k`
    /// of level `j` (a node that ends before `end`), skipping the parts whose lower bound
    /// `M + C(node end, end)` exceeds it by more than the rounding slack: every start that could
    /// attain the minimum is evaluated, so the result is the exact minimum.
    fn subtree_minimum(&mut self, j: usize, k: usize, end: usize, minimum: &mut f64, tail: Tail) {
        let node_minimum = self.nodes[j][k];
        if node_minimum == f64::INFINITY {
            return;
        }
        let size = LEAF_STARTS << j;
        let node_end = (k + 1) * size;
        let mut tail = tail;
        if minimum.is_finite() {
            if self.rules_out(node_minimum + tail.value(), *minimum) {
                return;
            }
            match self.exact_tail(tail, node_end, end, |t| node_minimum + t, *minimum) {
                Some(exact) => tail = Tail::Exact(exact),
                None => return,
            }
        }
        if j == 0 {
            if let Some(found) = self.minimum_total(k * size..node_end, end) {
                *minimum = minimum.min(found.total);
            }
        } else {
            // The right half first: nearer to `end`, it usually holds the smaller totals.
            let left_tail = tail.before(self.own[j - 1][2 * k + 1]);
            self.subtree_minimum(j - 1, 2 * k + 1, end, minimum, tail);
            self.subtree_minimum(j - 1, 2 * k, end, minimum, left_tail);
        }
    }

    /// The first minimum of `F(t) + C(t, end)` over the admissible starts in `range` (computed
    /// in [`pelt_pruned`]'s order of operations, penalty excluded).
    fn minimum_total(&mut self, range: std::ops::Range<usize>, end: usize) -> Option<Incumbent> {
        self.starts.clear();
        self.starts
            .extend(range.filter(|&t| self.best[t].is_finite()));
        self.totals.resize(self.starts.len(), 0.0);
        self.cost.costs_to(&self.starts, end, &mut self.totals);
        let mut found: Option<Incumbent> = None;
        for (&t, &c) in self.starts.iter().zip(&self.totals) {
            let total = self.best[t] + c;
            match &mut found {
                Some(inc) => inc.offer(total, t),
                None => found = Some(Incumbent { total, start: t }),
            }
        }
        found
    }

    /// Offers every admissible start in `range` at `end` to the incumbent.
    fn evaluate(&mut self, range: std::ops::Range<usize>, end: usize, incumbent: &mut Incumbent) {
        if let Some(found) = self.minimum_total(range, end) {
            incumbent.offer(found.total + self.penalty, found.start);
        }
    }

    fn solve_end(&mut self, end: usize, admissible_end: usize) {
        let prev = self.previous_argmin;
        // The maximal complete nodes covering [0, admissible_end), largest first, then the
        // starts after the last of them.
        let mut covered = 0;
        self.cover.clear();
        for j in (0..self.nodes.len()).rev() {
            let size = LEAF_STARTS << j;
            while covered + size <= admissible_end {
                self.cover.push((j, covered / size));
                covered += size;
            }
        }
        // Every cost `solve_end` itself needs, evaluated together (the segment cost runs
        // several starts in the time of one): the previous argmin's, and the tail
        // `C(node end, end)` of each covering node that holds an admissible start and ends
        // before `end` (with a minimum length of one the last one can end at `end`: its tail
        // is the empty segment's zero, which a cost is not asked for).
        self.tails.clear();
        self.tails.push(prev);
        for &(j, k) in &self.cover {
            let node_end = (k + 1) * (LEAF_STARTS << j);
            if self.nodes[j][k] != f64::INFINITY && node_end < end {
                self.tails.push(node_end);
            }
        }
        self.tail_costs.resize(self.tails.len(), 0.0);
        self.cost.costs_to(&self.tails, end, &mut self.tail_costs);
        let mut incumbent = Incumbent {
            total: self.best[prev] + self.tail_costs[0] + self.penalty,
            start: prev,
        };
        let mut known = 1;
        for i in 0..self.cover.len() {
            let (j, k) = self.cover[i];
            if self.nodes[j][k] == f64::INFINITY {
                continue;
            }
            let tail = if (k + 1) * (LEAF_STARTS << j) < end {
                known += 1;
                self.tail_costs[known - 1]
            } else {
                0.0
            };
            self.visit(j, k, end, &mut incumbent, Tail::Exact(tail));
        }
        self.evaluate(covered..admissible_end, end, &mut incumbent);
        self.best[end] = incumbent.total;
        self.last[end] = incumbent.start;
        self.previous_argmin = incumbent.start;
    }

    /// Opens node `k` of level `j` unless its lower bound rules it out. The exact tail is
    /// evaluated only when the bound with the lower bound on it does not, and the exact bound of
    /// the node holding the previous end's argmin is not tested: the incumbent's own start lies
    /// in it, so that bound cannot exceed the incumbent by more than rounding while the incumbent
    /// is that start's total, and once a better start lowered the incumbent, evaluating the
    /// starts of a node the exact bound would have ruled out changes nothing (none of them can
    /// win or tie). Its tail is still evaluated when its children need it sharp (below).
    fn visit(&mut self, j: usize, k: usize, end: usize, incumbent: &mut Incumbent, tail: Tail) {
        let minimum = self.nodes[j][k];
        if minimum == f64::INFINITY {
            return;
        }
        let size = LEAF_STARTS << j;
        let starts = k * size..(k + 1) * size;
        let bound_of = |tail: f64| minimum + tail + self.penalty;
        if self.rules_out(bound_of(tail.value()), incumbent.total) {
            return;
        }
        let mut tail = tail;
        if !starts.contains(&self.previous_argmin) {
            match self.exact_tail(tail, starts.end, end, bound_of, incumbent.total) {
                Some(exact) => tail = Tail::Exact(exact),
                None => return,
            }
        }
        if j == 0 {
            self.evaluate(starts, end, incumbent);
            return;
        }
        let (left, right) = (2 * k, 2 * k + 1);
        let mid = starts.start + size / 2;
        let mut left_tail = tail.before(self.own[j - 1][right]);
        if let Tail::AtLeast(lower) = tail {
            // This node holds the previous argmin, so only lower bounds reach its children.
            // When they no longer rule out the right child, both children's exact tails are
            // evaluated together (as cheap as one), which makes the bounds below sharp again.
            if !self.rules_out(
                self.nodes[j - 1][right] + lower + self.penalty,
                incumbent.total,
            ) {
                let mut exact = [0.0; 2];
                self.cost.costs_to(&[mid, starts.end], end, &mut exact);
                left_tail = Tail::Exact(exact[0]);
                tail = Tail::Exact(exact[1]);
            }
        }
        self.visit(j - 1, left, end, incumbent, left_tail);
        self.visit(j - 1, right, end, incumbent, tail);
    }
}

/// What a node's tail `C(node end, end)` is known to be.
#[derive(Clone, Copy)]
enum Tail {
    Exact(f64),
    /// A lower bound: the tail of a later node plus the costs of the nodes in between (a split
    /// never raises the cost).
    AtLeast(f64),
}

impl Tail {
    fn value(self) -> f64 {
        match self {
            Tail::Exact(t) | Tail::AtLeast(t) => t,
        }
    }

    /// The tail of the node just before a node whose own cost is `own` and whose tail is this
    /// one: at least their sum.
    fn before(self, own: f64) -> Tail {
        Tail::AtLeast(own + self.value())
    }
}

/// Exact PELT with the `K = 0` pruning rule and a minimum segment length, as published: the
/// reference [`pelt`] is checked against.
///
/// Recursion: `F(s) = min_t F(t) + C(t, s) + β` over admissible last change points `t`
/// (`t = 0` or `min_size <= t <= s − min_size`), `F(0) = 0`; the objective is `F(n) − β`.
/// Pruning (Killick et al. 2012, Theorem 3.1 with `K = 0`): if `F(t) + C(t, s) > F(s)` then for
/// every `s' >= s + min_size`, `F(t) + C(t, s') > F(s) + C(s, s') >= F(s') − β`, so `t` is retired
/// from `s + min_size` on. (It stays a candidate for the ends in between, where a segment
/// `s..s'` would be too short; retiring it at once is not exact when `min_size > 1`.) Ties go to
/// the earliest `t`.
///
/// Cost: the rule discards the starts before a change point soon after it, but inside a
/// homogeneous stretch that began at `c` no start `t` is ever discarded (a split never raises the
/// cost, so `F(t) + C(t, s) <= F(c) + C(c, s)`), so the work is O(n · L) cost evaluations for a
/// longest segment of L samples: linear when change points are dense, quadratic for a series
/// without any (Killick et al. 2012 state the same worst case).
pub fn pelt_pruned<C: SegmentCost>(
    cost: &C,
    penalty: f64,
    min_size: usize,
) -> Result<Segmentation, StatsError> {
    let n = cost.n_samples();
    check_search(n, penalty, min_size)?;
    let mut best = vec![f64::INFINITY; n + 1];
    let mut last = vec![0usize; n + 1];
    best[0] = 0.0;
    let mut candidates = Candidates::default();
    for end in min_size..=n {
        let start = end - min_size;
        if best[start].is_finite() {
            candidates.push(start, best[start]);
        }
        let (min_total, argmin) = candidates.evaluate(cost, end, penalty);
        best[end] = min_total;
        last[end] = argmin;
        candidates.prune(min_total + penalty, end, min_size);
    }
    Ok(Segmentation {
        breakpoints: backtrack(&last, n),
        objective: best[n] - penalty,
    })
}

/// Optimal partitioning (Jackson et al. 2005, IEEE Signal Processing Letters 12:105-108): the
/// same recursion as [`pelt`] over every admissible `t`, without pruning. O(n²) cost
/// evaluations; the reference the pruned search is checked against.
pub fn optimal_partitioning<C: SegmentCost>(
    cost: &C,
    penalty: f64,
    min_size: usize,
) -> Result<Segmentation, StatsError> {
    let n = cost.n_samples();
    check_search(n, penalty, min_size)?;
    let mut best = vec![f64::INFINITY; n + 1];
    let mut last = vec![0usize; n + 1];
    best[0] = 0.0;
    for end in min_size..=n {
        let starts = std::iter::once(0).chain(min_size..=end.saturating_sub(min_size));
        for start in starts.filter(|&t| t + min_size <= end) {
            let total = best[start] + cost.cost(start, end) + penalty;
            if total < best[end] {
                best[end] = total;
                last[end] = start;
            }
        }
    }
    Ok(Segmentation {
        breakpoints: backtrack(&last, n),
        objective: best[n] - penalty,
    })
}

/// PELT exactly as the Python package ruptures 1.1.10 runs it (`Pelt(...).fit(x).predict(pen)`),
/// returning the same breakpoints.
///
/// Segment ends are restricted to multiples of `jump` that are `>= min_size`, plus `n`; for
/// each end `e` the start `floor((e − min_size)/jump)·jump` joins the admissible set; starts
/// with no computed partition are skipped; the best is the first minimum of
/// `F(t) + (C(t, e) + pen)` in admissible order; starts are kept while their total is
/// `<= F(e) + pen`. The sums are accumulated in ruptures' order so that ties break the same way.
/// With `min_size = 1, jump = 1` this is exact PELT; otherwise the grid restricts the search and
/// pruning immediately at `e` is not exact when `min_size > 1` (that is ruptures' behaviour).
pub fn pelt_ruptures<C: SegmentCost>(
    cost: &C,
    penalty: f64,
    min_size: usize,
    jump: usize,
) -> Result<Vec<usize>, StatsError> {
    let n = cost.n_samples();
    let min_size = min_size.max(1);
    check_search(n, penalty, min_size)?;
    if jump == 0 {
        return Err(StatsError::InvalidParameter {
            name: "jump",
            value: 0.0,
            expected: "at least 1",
        });
    }
    let mut best: Vec<Option<f64>> = vec![None; n + 1];
    let mut last = vec![0usize; n + 1];
    best[0] = Some(0.0);
    let ends = (0..n)
        .step_by(jump)
        .filter(|&k| k >= min_size)
        .chain(std::iter::once(n));
    let mut admissible: Vec<usize> = Vec::new();
    for end in ends {
        admissible.push((end - min_size) / jump * jump);
        let totals: Vec<(usize, f64)> = admissible
            .iter()
            .filter_map(|&t| best[t].map(|f| (t, f + (cost.cost(t, end) + penalty))))
            .collect();
        let &(arg, min_total) = totals
            .iter()
            .fold(None, |acc: Option<&(usize, f64)>, item| match acc {
                Some(a) if a.1 <= item.1 => Some(a),
                _ => Some(item),
            })
            .ok_or(StatsError::InvalidParameter {
                name: "jump",
                value: jump as f64,
                expected: "a grid with a segment end between the minimum length and the series end",
            })?;
        best[end] = Some(min_total);
        last[end] = arg;
        // ruptures zips the admissible list with the computed subproblems, which drops the
        // trailing starts that had no partition.
        admissible = admissible
            .iter()
            .zip(&totals)
            .filter(|(_, (_, total))| *total <= min_total + penalty)
            .map(|(&t, _)| t)
            .collect();
    }
    Ok(backtrack(&last, n))
}
