//! Antenna choice from candidate coverage.
//!
//! Given the level the existing antennas give in every grid cell of one floor, and the level
//! each candidate position would add, [`design`] picks a small set of new antennas so that the
//! caller's rule-set predicate passes:
//!
//! 1. if the existing antennas already pass, nothing is added;
//! 2. greedy: add the candidate that brings the most weighted area to the required level (ties:
//!    the larger rise of the level capped at the requirement, then the lowest index), each
//!    trial scored in O(cells) against the current combined levels, until the predicate
//!    passes, the limit is reached or no candidate improves anything;
//! 3. prune: drop every chosen antenna the predicate does not need;
//! 4. if still failing, swap a chosen antenna for an unchosen one while that raises the score
//!    (a bounded number of rounds);
//! 5. exact phase: enumerate every smaller subset in lexicographic order within the evaluation
//!    budget (when the design still fails, every subset up to the limit), so that a found set
//!    is proven minimal.
//!
//! Cell conventions: a NaN in the base levels marks a cell off the floor; it stays NaN and is
//! ignored everywhere. `-inf` is no signal. A candidate level that is NaN, or missing because
//! the candidate vector is shorter than the base, adds no signal; candidate cells beyond the
//! base length are ignored. A missing, negative or non-finite weight counts as 0.

const NEG_INFINITY: f32 = f32::NEG_INFINITY;

/// How the levels of several antennas at one cell combine.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Combine {
    /// The strongest antenna sets the level (maximum).
    Strongest,
    /// Powers add: `10·log10 Σ 10^(L/10)` (uncorrelated signals).
    PowerSum,
}

/// One floor's choice problem: existing coverage, candidate coverage and the target.
#[derive(Debug, Clone, Copy)]
pub struct Problem<'a> {
    /// Level of the existing antennas per cell, dBm (NaN = off the floor, `-inf` = no signal).
    pub base_dbm: &'a [f32],
    /// Per candidate position: the level it gives per cell, dBm (same length as the base).
    pub candidates: &'a [Vec<f32>],
    /// Weight per cell (critical zones weigh more; 0 = don't care).
    pub weight: &'a [f32],
    /// Level required in every cell, dBm.
    pub required_dbm: f32,
    /// How the levels of several antennas combine.
    pub combine: Combine,
    /// Largest number of new antennas.
    pub max_antennas: usize,
    /// Largest number of predicate evaluations the exact phase may spend.
    pub exact_budget: usize,
}

/// The chosen antennas and what is known about them.
#[derive(Debug, Clone, PartialEq)]
pub struct Design {
    /// Chosen candidate indices, ascending.
    pub chosen: Vec<usize>,
    /// Whether the predicate passed on the combined levels of the chosen set.
    pub passes: bool,
    /// [`score`] of the combined levels of the chosen set.
    pub score: f64,
    /// True when the design passes and no smaller set passes (proven by enumeration).
    pub optimal: bool,
    /// Number of calls made to the predicate.
    pub evaluations: usize,
}

/// Levels below the requirement by more than this count as this far below (capped-level gain).
const CAP_FLOOR_DB: f32 = 100.0;
/// Largest number of swap rounds when the greedy design fails.
const SWAP_ROUNDS: usize = 8;
/// Largest number of candidates [`exhaustive_minimum`] accepts.
const EXHAUSTIVE_LIMIT: usize = 20;

/// Base levels combined with the chosen candidates (each index counted once; indices out of
/// range are ignored). The result has the length of the base.
pub fn combined(p: &Problem, chosen: &[usize]) -> Vec<f32> {
    let mut unique = chosen.to_vec();
    unique.sort_unstable();
    unique.dedup();
    let mut levels = p.base_dbm.to_vec();
    for cand in unique.iter().filter_map(|&c| p.candidates.get(c)) {
        add_into(p.combine, &mut levels, cand);
    }
    levels
}

/// Sum of the weights of the cells whose level reaches the requirement (NaN cells ignored).
pub fn score(p: &Problem, levels: &[f32]) -> f64 {
    levels
        .iter()
        .enumerate()
        .filter(|&(_, &l)| covered(p, l))
        .map(|(i, _)| weight_at(p, i))
        .sum()
}

/// Chooses a minimal set of new antennas so that `passes` holds (see the module docs).
pub fn design(p: &Problem, passes: &mut dyn FnMut(&[f32]) -> bool) -> Design {
    let mut ev = Evaluator { passes, count: 0 };
    let base_passes = ev.eval(p.base_dbm);
    let limit = p.max_antennas.min(p.candidates.len());
    if base_passes || limit == 0 {
        return finish(p, Vec::new(), base_passes, base_passes, ev.count);
    }
    let (mut chosen, mut ok) = greedy(p, &mut ev, limit);
    if !ok {
        ok = swaps(p, &mut chosen, &mut ev);
    }
    if ok {
        prune(p, &mut chosen, &mut ev);
    }
    let sizes = if ok { 1..chosen.len() } else { 1..limit + 1 };
    let (chosen, ok, optimal) = match enumerate(p, sizes, p.exact_budget, &mut ev) {
        Exact::Found(set) => (set, true, true),
        Exact::Exhausted => (chosen, ok, ok),
        Exact::OutOfBudget => (chosen, ok, false),
    };
    finish(p, chosen, ok, optimal, ev.count)
}

/// The smallest subset of at most `max_antennas` candidates that passes (lexicographically
/// first among sets of that size; the empty set when the base passes). `None` when no such
/// subset passes, or when there are more than 20 candidates (refused, nothing evaluated).
pub fn exhaustive_minimum(
    p: &Problem,
    passes: &mut dyn FnMut(&[f32]) -> bool,
) -> Option<Vec<usize>> {
    if p.candidates.len() > EXHAUSTIVE_LIMIT {
        return None;
    }
    let limit = p.max_antennas.min(p.candidates.len());
    let mut ev = Evaluator { passes, count: 0 };
    match enumerate(p, 0..limit + 1, usize::MAX, &mut ev) {
        Exact::Found(set) => Some(set),
        Exact::Exhausted | Exact::OutOfBudget => None,
    }
}

/// The caller's predicate with a count of its calls.
struct Evaluator<'f> {
    passes: &'f mut dyn FnMut(&[f32]) -> bool,
    count: usize,
}

impl Evaluator<'_> {
    fn eval(&mut self, levels: &[f32]) -> bool {
        self.count += 1;
        (self.passes)(levels)
    }
}

/// Builds the final [`Design`]: sorted indices and the score of their combined levels.
fn finish(p: &Problem, mut chosen: Vec<usize>, passes: bool, optimal: bool, n: usize) -> Design {
    chosen.sort_unstable();
    let score = score(p, &combined(p, &chosen));
    Design {
        chosen,
        passes,
        score,
        optimal,
        evaluations: n,
    }
}

/// Whether a level reaches the requirement (never for NaN).
fn covered(p: &Problem, level: f32) -> bool {
    level >= p.required_dbm
}

/// Weight of cell `i`; missing, negative or non-finite weights count as 0.
fn weight_at(p: &Problem, i: usize) -> f64 {
    match p.weight.get(i) {
        Some(&w) if w.is_finite() && w > 0.0 => f64::from(w),
        _ => 0.0,
    }
}

/// Level of a candidate at cell `i`; missing or NaN is no signal.
fn cand_level(cand: &[f32], i: usize) -> f32 {
    match cand.get(i) {
        Some(&l) if !l.is_nan() => l,
        _ => NEG_INFINITY,
    }
}

/// Combines an antenna's level `add` into the level `cur` of one cell.
fn combine2(mode: Combine, cur: f32, add: f32) -> f32 {
    if cur.is_nan() || add.is_nan() || add == NEG_INFINITY {
        return cur;
    }
    if cur == NEG_INFINITY {
        return add;
    }
    match mode {
        Combine::Strongest => cur.max(add),
        Combine::PowerSum => power_sum(cur, add),
    }
}

/// `10·log10(10^(a/10) + 10^(b/10))` for finite or `+inf` levels, computed stably as
/// `hi + 10·log10(1 + 10^((lo − hi)/10))`.
fn power_sum(a: f32, b: f32) -> f32 {
    let (hi, lo) = if a >= b { (a, b) } else { (b, a) };
    if hi == f32::INFINITY {
        return hi;
    }
    let (hi, lo) = (f64::from(hi), f64::from(lo));
    (hi + 10.0 * (1.0 + 10f64.powf((lo - hi) / 10.0)).log10()) as f32
}

/// Combines a candidate into `levels` in place (O(cells)).
fn add_into(mode: Combine, levels: &mut [f32], cand: &[f32]) {
    for (i, l) in levels.iter_mut().enumerate() {
        *l = combine2(mode, *l, cand_level(cand, i));
    }
}

/// Level capped at the requirement and floored [`CAP_FLOOR_DB`] below it.
fn capped(p: &Problem, level: f32) -> f64 {
    f64::from(level.min(p.required_dbm).max(p.required_dbm - CAP_FLOOR_DB))
}

/// What adding one candidate to the current levels brings.
#[derive(Debug, Clone, Copy)]
struct Gain {
    /// Weight of the cells newly at the required level.
    area: f64,
    /// Sum over cells of the rise of the capped level, dB.
    capped: f64,
}

impl Gain {
    fn beats(&self, other: &Gain) -> bool {
        self.area > other.area || (self.area == other.area && self.capped > other.capped)
    }

    fn improves(&self) -> bool {
        self.area > 0.0 || self.capped > 0.0
    }
}

/// Gain of adding `cand` to `levels`, in O(cells) without building the trial vector.
fn trial_gain(p: &Problem, levels: &[f32], cand: &[f32]) -> Gain {
    let mut gain = Gain {
        area: 0.0,
        capped: 0.0,
    };
    for (i, &old) in levels.iter().enumerate() {
        let new = combine2(p.combine, old, cand_level(cand, i));
        if new.is_nan() || new <= old {
            continue;
        }
        if covered(p, new) && !covered(p, old) {
            gain.area += weight_at(p, i);
        }
        let rise = capped(p, new) - capped(p, old);
        if rise.is_finite() && rise > 0.0 {
            gain.capped += rise;
        }
    }
    gain
}

/// The unchosen candidate with the best gain, if any candidate improves anything.
fn best_addition(p: &Problem, levels: &[f32], chosen: &[usize]) -> Option<usize> {
    let mut best: Option<(usize, Gain)> = None;
    for (c, cand) in p.candidates.iter().enumerate() {
        if chosen.contains(&c) {
            continue;
        }
        let gain = trial_gain(p, levels, cand);
        if gain.improves() && best.is_none_or(|(_, b)| gain.beats(&b)) {
            best = Some((c, gain));
        }
    }
    best.map(|(c, _)| c)
}

/// Greedy phase: the chosen indices in order of addition, and whether the predicate passed.
fn greedy(p: &Problem, ev: &mut Evaluator, limit: usize) -> (Vec<usize>, bool) {
    let mut levels = p.base_dbm.to_vec();
    let mut chosen = Vec::new();
    while chosen.len() < limit {
        let Some(c) = best_addition(p, &levels, &chosen) else {
            break;
        };
        chosen.push(c);
        // Recombined once per step (trials stay incremental): power sums round differently
        // in another order, and the verdict must be on exactly what `combined` returns.
        levels = combined(p, &chosen);
        if ev.eval(&levels) {
            return (chosen, true);
        }
    }
    (chosen, false)
}

/// `chosen` without the element at `pos`.
fn without(chosen: &[usize], pos: usize) -> Vec<usize> {
    let mut rest = chosen.to_vec();
    if pos < rest.len() {
        rest.remove(pos);
    }
    rest
}

/// Drops, in turn, every chosen antenna the predicate still passes without.
fn prune(p: &Problem, chosen: &mut Vec<usize>, ev: &mut Evaluator) {
    let mut pos = 0;
    while pos < chosen.len() && chosen.len() > 1 {
        let rest = without(chosen, pos);
        if ev.eval(&combined(p, &rest)) {
            *chosen = rest;
        } else {
            pos += 1;
        }
    }
}

/// Score of `levels` with `cand` added, in O(cells).
fn score_with(p: &Problem, levels: &[f32], cand: &[f32]) -> f64 {
    levels
        .iter()
        .enumerate()
        .filter(|&(i, &l)| covered(p, combine2(p.combine, l, cand_level(cand, i))))
        .map(|(i, _)| weight_at(p, i))
        .sum()
}

/// The swap (position in `chosen`, new candidate) that raises the score most, if any does.
fn best_swap(p: &Problem, chosen: &[usize]) -> Option<(usize, usize)> {
    let mut best_score = score(p, &combined(p, chosen));
    let mut best = None;
    for pos in 0..chosen.len() {
        let rest = combined(p, &without(chosen, pos));
        for (c, cand) in p.candidates.iter().enumerate() {
            if chosen.contains(&c) {
                continue;
            }
            let s = score_with(p, &rest, cand);
            if s > best_score {
                best_score = s;
                best = Some((pos, c));
            }
        }
    }
    best
}

/// Swap phase for a failing design: returns whether the predicate passed after a swap.
fn swaps(p: &Problem, chosen: &mut [usize], ev: &mut Evaluator) -> bool {
    for _ in 0..SWAP_ROUNDS {
        let Some((pos, c)) = best_swap(p, chosen) else {
            return false;
        };
        if let Some(slot) = chosen.get_mut(pos) {
            *slot = c;
        }
        if ev.eval(&combined(p, chosen)) {
            return true;
        }
    }
    false
}

/// Outcome of the enumeration of subsets.
enum Exact {
    /// The first passing subset of the smallest size.
    Found(Vec<usize>),
    /// Every subset of the sizes asked for was tried; none passed.
    Exhausted,
    /// The budget ran out first.
    OutOfBudget,
}

/// Tries every subset of the given sizes, smallest size first, lexicographic within a size,
/// spending at most `budget` predicate evaluations.
fn enumerate(
    p: &Problem,
    sizes: std::ops::Range<usize>,
    budget: usize,
    ev: &mut Evaluator,
) -> Exact {
    let n = p.candidates.len();
    let mut spent = 0usize;
    for size in sizes.filter(|&s| s <= n) {
        let mut combo: Vec<usize> = (0..size).collect();
        loop {
            if spent >= budget {
                return Exact::OutOfBudget;
            }
            spent += 1;
            if ev.eval(&combined(p, &combo)) {
                return Exact::Found(combo);
            }
            if !next_combination(&mut combo, n) {
                break;
            }
        }
    }
    Exact::Exhausted
}

/// Advances `combo` (ascending indices below `n`) to the next subset of the same size in
/// lexicographic order; false when it was the last.
fn next_combination(combo: &mut [usize], n: usize) -> bool {
    let size = combo.len();
    for i in (0..size).rev() {
        let Some(&v) = combo.get(i) else {
            return false;
        };
        if v + size < n + i {
            let mut next = v;
            for slot in combo.iter_mut().skip(i) {
                next += 1;
                *slot = next;
            }
            return true;
        }
    }
    false
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::collection::vec;
    use proptest::prelude::*;

    const NO: f32 = f32::NEG_INFINITY;
    /// Level used for "covered" cells in the hand-built cases (above the -70 dBm requirement).
    const ON: f32 = -60.0;

    fn problem<'a>(base: &'a [f32], cands: &'a [Vec<f32>], weight: &'a [f32]) -> Problem<'a> {
        Problem {
            base_dbm: base,
            candidates: cands,
            weight,
            required_dbm: -70.0,
            combine: Combine::Strongest,
            max_antennas: 10,
            exact_budget: 1 << 20,
        }
    }

    /// A candidate giving `ON` on the listed cells and no signal elsewhere.
    fn cover(cells: usize, on: &[usize]) -> Vec<f32> {
        (0..cells)
            .map(|i| if on.contains(&i) { ON } else { NO })
            .collect()
    }

    /// Rule written independently of `score`: every floor cell with weight > 0 reaches -70 dBm.
    fn all_covered(weight: &[f32], req: f32) -> impl Fn(&[f32]) -> bool + '_ {
        move |levels: &[f32]| {
            levels
                .iter()
                .zip(weight)
                .all(|(&l, &w)| l.is_nan() || w <= 0.0 || l >= req)
        }
    }

    #[test]
    fn power_sum_of_two_equal_antennas() {
        // Hand calculation: 10·log10(2 · 10^-8) = -80 + 10·log10 2 = -80 + 3.0103 = -76.9897 dBm.
        let base = [NO];
        let cands = vec![vec![-80.0], vec![-80.0]];
        let mut p = problem(&base, &cands, &[1.0]);
        p.combine = Combine::PowerSum;
        let l = combined(&p, &[0, 1]);
        assert!((l[0] - (-76.9897)).abs() < 0.01, "{l:?}");
    }

    #[test]
    fn power_sum_of_three_antennas() {
        // Hand calculation: 10^-7 + 10^-7.3 + 10^-7.6 = (1 + 0.501187 + 0.251189) · 10^-7 mW
        // = 1.752376 · 10^-7 mW; 10·log10 of that = -70 + 2.4363 = -67.5637 dBm.
        let base = [-70.0];
        let cands = vec![vec![-73.0], vec![-76.0]];
        let mut p = problem(&base, &cands, &[1.0]);
        p.combine = Combine::PowerSum;
        let l = combined(&p, &[0, 1]);
        assert!((l[0] - (-67.5637)).abs() < 0.01, "{l:?}");
    }

    #[test]
    fn no_signal_adds_nothing_and_strongest_is_the_maximum() {
        // Definitions: 10^(-inf/10) = 0, so -inf adds no power; Strongest is the maximum.
        let base = [NO, -80.0];
        let cands = vec![vec![-80.0, -70.0], vec![NO, NO]];
        let mut p = problem(&base, &cands, &[1.0, 1.0]);
        assert_eq!(combined(&p, &[0, 1]), vec![-80.0, -70.0]);
        p.combine = Combine::PowerSum;
        assert_eq!(combined(&p, &[1]), vec![NO, -80.0]);
        assert_eq!(combined(&p, &[0, 1])[0], -80.0);
    }

    #[test]
    fn score_ignores_nan_cells_and_bad_weights() {
        // Hand count at -70 dBm: cell 0 off the floor (NaN), cell 1 covered (weight 1), cell 2
        // too weak, cell 3 covered but its weight is NaN (counts 0), cell 4 covered, weight
        // missing (counts 0). Score = 1.
        let base = [f32::NAN, -60.0, -80.0, -65.0, -50.0];
        let p = problem(&base, &[], &[5.0, 1.0, 2.0, f32::NAN]);
        assert_eq!(score(&p, &base), 1.0);
    }

    #[test]
    fn max_antennas_zero_adds_nothing() {
        // Candidate 0 alone would pass, but no antenna may be added: the base (no signal) fails.
        let base = [NO, NO];
        let cands = vec![cover(2, &[0, 1])];
        let weight = [1.0, 1.0];
        let mut p = problem(&base, &cands, &weight);
        p.max_antennas = 0;
        let rule = all_covered(&weight, -70.0);
        let d = design(&p, &mut |l| rule(l));
        assert_eq!(d.chosen, Vec::<usize>::new());
        assert!(!d.passes && !d.optimal);
        assert_eq!((d.evaluations, d.score), (1, 0.0));
        assert_eq!(exhaustive_minimum(&p, &mut |l| rule(l)), None);
    }

    #[test]
    fn base_already_passing_adds_nothing() {
        // Both cells at -60 dBm >= -70 dBm: the rule holds with no new antenna.
        let base = [ON, ON];
        let cands = vec![cover(2, &[0])];
        let weight = [1.0, 2.0];
        let p = problem(&base, &cands, &weight);
        let rule = all_covered(&weight, -70.0);
        let d = design(&p, &mut |l| rule(l));
        assert_eq!(d.chosen, Vec::<usize>::new());
        assert!(d.passes && d.optimal);
        assert_eq!((d.evaluations, d.score), (1, 3.0));
    }

    /// Ten cells: a centre candidate covering cells 1..=8 and two halves 0..=4 and 5..=9.
    fn centre_and_halves() -> (Vec<Vec<f32>>, Vec<f32>) {
        let cands = vec![
            cover(10, &[1, 2, 3, 4, 5, 6, 7, 8]),
            cover(10, &[0, 1, 2, 3, 4]),
            cover(10, &[5, 6, 7, 8, 9]),
        ];
        (cands, vec![1.0; 10])
    }

    #[test]
    fn greedy_takes_three_where_two_suffice() {
        // Hand run: greedy takes the centre (8 cells), then the left half (cell 0; tie with the
        // right half broken by index), then the right half (cell 9). The two halves alone cover
        // all ten cells and no single candidate does, so the minimum is 2.
        let (cands, weight) = centre_and_halves();
        let base = [NO; 10];
        let p = problem(&base, &cands, &weight);
        let rule = all_covered(&weight, -70.0);
        let mut pred = |l: &[f32]| rule(l);
        let mut ev = Evaluator {
            passes: &mut pred,
            count: 0,
        };
        assert_eq!(greedy(&p, &mut ev, 3), (vec![0, 1, 2], true));
        let mut calls = 0;
        let d = design(&p, &mut |l| {
            calls += 1;
            rule(l)
        });
        assert_eq!(d.chosen, vec![1, 2]);
        assert!(d.passes && d.optimal);
        assert_eq!(d.evaluations, calls);
        assert_eq!(d.score, 10.0);
        // Pruning alone (no exact budget) drops the centre; minimality is then unproven.
        let p = Problem {
            exact_budget: 0,
            ..p
        };
        let d = design(&p, &mut |l| rule(l));
        assert_eq!((d.chosen, d.passes, d.optimal), (vec![1, 2], true, false));
    }

    #[test]
    fn swap_repairs_a_failing_greedy_design() {
        // With at most 2 antennas greedy takes centre + left half and misses cell 9. Replacing
        // the centre by the right half raises the score from 9 to 10 cells and passes. With a
        // zero exact budget only the swap phase can find this, and minimality is unproven.
        let (cands, weight) = centre_and_halves();
        let base = [NO; 10];
        let mut p = problem(&base, &cands, &weight);
        p.max_antennas = 2;
        p.exact_budget = 0;
        let rule = all_covered(&weight, -70.0);
        let d = design(&p, &mut |l| rule(l));
        assert_eq!(d.chosen, vec![1, 2]);
        assert!(d.passes && !d.optimal);
    }

    /// Twelve cells. X = {2,3,4,7,8,9,10}, Y = {0,1,5,6}, Z = {11}, P = {0..=5}, Q = {6..=11}.
    fn irreducible_triple() -> (Vec<Vec<f32>>, Vec<f32>) {
        let cands = vec![
            cover(12, &[2, 3, 4, 7, 8, 9, 10]),
            cover(12, &[0, 1, 5, 6]),
            cover(12, &[11]),
            cover(12, &[0, 1, 2, 3, 4, 5]),
            cover(12, &[6, 7, 8, 9, 10, 11]),
        ];
        (cands, vec![1.0; 12])
    }

    #[test]
    fn exact_phase_finds_a_pair_pruning_cannot() {
        // Hand run: greedy takes X (7 cells), Y (4 of the 5 left), Z (cell 11; ties with Q,
        // lower index). None of X, Y, Z can be dropped. P + Q cover all twelve cells; the
        // exact phase tries 5 singles and then pairs (0,1) (0,2) (0,3) (0,4) (1,2) (1,3) (1,4)
        // (2,3) (2,4) (3,4): the 10th pair, i.e. the 15th evaluation of the phase, passes.
        let (cands, weight) = irreducible_triple();
        let base = [NO; 12];
        let mut p = problem(&base, &cands, &weight);
        let rule = all_covered(&weight, -70.0);
        for (budget, chosen, optimal) in [
            (0, vec![0, 1, 2], false),
            (14, vec![0, 1, 2], false),
            (15, vec![3, 4], true),
            (1 << 20, vec![3, 4], true),
        ] {
            p.exact_budget = budget;
            let d = design(&p, &mut |l| rule(l));
            assert_eq!(
                (d.chosen, d.passes, d.optimal),
                (chosen, true, optimal),
                "{budget}"
            );
        }
        assert_eq!(exhaustive_minimum(&p, &mut |l| rule(l)), Some(vec![3, 4]));
    }

    #[test]
    fn mismatched_lengths_do_not_panic() {
        // Base of 4 cells; candidate 0 is 2 cells long (cells 2, 3 missing = no signal),
        // candidate 1 is 6 cells long (cells 4, 5 ignored); weight has 3 entries (cell 3 = 0).
        let base = [NO; 4];
        let cands = vec![vec![ON, ON], vec![NO, NO, ON, ON, ON, ON]];
        let weight = [1.0, 1.0, 1.0];
        let p = problem(&base, &cands, &weight);
        assert_eq!(combined(&p, &[0, 1]), vec![ON; 4]);
        assert_eq!(combined(&p, &[0, 7]), vec![ON, ON, NO, NO]);
        assert_eq!(score(&p, &[ON; 6]), 3.0);
        let rule = |l: &[f32]| l.iter().all(|&x| x >= -70.0);
        let d = design(&p, &mut |l| rule(l));
        assert_eq!((d.chosen, d.passes, d.score), (vec![0, 1], true, 3.0));
        let empty = problem(&[], &cands, &[]);
        assert!(design(&empty, &mut |l| rule(l)).passes);
    }

    #[test]
    fn exhaustive_refuses_more_than_twenty_candidates() {
        // 21 candidates would be 2^21 subsets: refused without evaluating anything.
        let base = [NO];
        let cands = vec![vec![ON]; 21];
        let p = problem(&base, &cands, &[1.0]);
        let mut calls = 0;
        let found = exhaustive_minimum(&p, &mut |_| {
            calls += 1;
            true
        });
        assert_eq!((found, calls), (None, 0));
    }

    #[derive(Debug, Clone)]
    struct Instance {
        base: Vec<f32>,
        cands: Vec<Vec<f32>>,
        weight: Vec<f32>,
        required: f32,
        combine: Combine,
        max: usize,
    }

    impl Instance {
        fn problem(&self) -> Problem<'_> {
            Problem {
                base_dbm: &self.base,
                candidates: &self.cands,
                weight: &self.weight,
                required_dbm: self.required,
                combine: self.combine,
                max_antennas: self.max,
                exact_budget: 1 << 20,
            }
        }
    }

    fn level() -> impl Strategy<Value = f32> {
        prop_oneof![6 => -110.0f32..-40.0, 2 => Just(NO), 1 => Just(f32::NAN)]
    }

    fn instance() -> impl Strategy<Value = Instance> {
        (1usize..=30, 0usize..=10)
            .prop_flat_map(|(cells, n)| {
                (
                    vec(level(), cells),
                    vec(vec(level(), cells), n),
                    vec(prop_oneof![Just(0.0f32), 0.5f32..3.0], cells),
                    -75.0f32..-55.0,
                    any::<bool>(),
                    0usize..=10,
                )
            })
            .prop_map(|(base, cands, weight, required, sum, max)| Instance {
                base,
                cands,
                weight,
                required,
                combine: if sum {
                    Combine::PowerSum
                } else {
                    Combine::Strongest
                },
                max,
            })
    }

    /// Rule written independently of `score`: the covered share of the weighted floor area
    /// is at least `share` (an empty weighted area passes).
    fn area_share(levels: &[f32], weight: &[f32], req: f32, share: f64) -> bool {
        let on_floor = || {
            levels
                .iter()
                .zip(weight)
                .filter(|(l, w)| !l.is_nan() && **w > 0.0)
        };
        let total: f64 = on_floor().map(|(_, &w)| f64::from(w)).sum();
        let good: f64 = on_floor()
            .filter(|(&l, _)| l >= req)
            .map(|(_, &w)| f64::from(w))
            .sum();
        total == 0.0 || good >= share * total
    }

    /// Brute-force reference: every subset as a bit mask, smallest size within the limit,
    /// lexicographically first among that size (Vec ordering).
    fn brute_minimum(p: &Problem, pred: &dyn Fn(&[f32]) -> bool) -> Option<Vec<usize>> {
        let n = p.candidates.len();
        let passing = (0u32..1 << n).filter_map(|mask| {
            let set: Vec<usize> = (0..n).filter(|i| mask & (1 << i) != 0).collect();
            (set.len() <= p.max_antennas && pred(&combined(p, &set))).then_some(set)
        });
        passing.min_by(|a, b| a.len().cmp(&b.len()).then_with(|| a.cmp(b)))
    }

    fn check_against_brute_force(inst: &Instance, pred: &dyn Fn(&[f32]) -> bool) {
        let p = inst.problem();
        let reference = brute_minimum(&p, pred);
        let d = design(&p, &mut |l| pred(l));
        assert_eq!(d.passes, reference.is_some(), "{d:?} vs {reference:?}");
        if let Some(best) = &reference {
            assert_eq!(d.chosen.len(), best.len(), "{d:?} vs {best:?}");
            assert!(d.optimal);
        }
        assert_eq!(exhaustive_minimum(&p, &mut |l| pred(l)), reference);
    }

    proptest! {
        /// Source: exhaustive enumeration of all subsets (brute force above).
        #[test]
        fn design_is_minimal_for_monotone_rules(inst in instance(), share in 0.3f64..=1.0) {
            let (w, req) = (inst.weight.clone(), inst.required);
            check_against_brute_force(&inst, &|l| area_share(l, &w, req, share));
            let rule = all_covered(&w, req);
            check_against_brute_force(&inst, &rule);
        }

        /// Source: definition of the power sum, 10·log10 Σ 10^(L/10), evaluated directly in f64.
        #[test]
        fn power_sum_matches_the_direct_formula(levels in vec(-120.0f32..-20.0, 1..5)) {
            let base = [NO];
            let cands: Vec<Vec<f32>> = levels.iter().map(|&l| vec![l]).collect();
            let mut p = problem(&base, &cands, &[1.0]);
            p.combine = Combine::PowerSum;
            let all: Vec<usize> = (0..cands.len()).collect();
            let mw: f64 = levels.iter().map(|&l| 10f64.powf(f64::from(l) / 10.0)).sum();
            let direct = 10.0 * mw.log10();
            prop_assert!((f64::from(combined(&p, &all)[0]) - direct).abs() < 1e-3);
        }

        /// Source: the contract of `design` for an arbitrary (non-monotone) rule: sorted,
        /// distinct, in-range indices within the limit, counted calls, consistent verdict.
        #[test]
        fn design_survives_non_monotone_rules(inst in instance(), salt in any::<u32>()) {
            let p = inst.problem();
            let rule = |l: &[f32]| {
                let h = l.iter().fold(salt, |h, x| h.rotate_left(5) ^ x.to_bits());
                h.count_ones() % 2 == 0
            };
            let mut calls = 0;
            let d = design(&p, &mut |l| { calls += 1; rule(l) });
            prop_assert!(d.chosen.windows(2).all(|w| w[0] < w[1]));
            prop_assert!(d.chosen.iter().all(|&c| c < inst.cands.len()));
            prop_assert!(d.chosen.len() <= inst.max);
            prop_assert_eq!(d.evaluations, calls);
            prop_assert_eq!(d.passes, rule(&combined(&p, &d.chosen)));
            prop_assert_eq!(d.score, score(&p, &combined(&p, &d.chosen)));
        }
    }
}
