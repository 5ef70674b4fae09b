//! One classification tree of the forest: CART with the Gini criterion on weighted
//! samples (Breiman et al., *Classification and Regression Trees*, 1984), grown
//! deterministically in f64, stored flat for a fast walk. Splits follow linfa-trees'
//! rule (midpoint thresholds, `x <= t` goes left); unlike linfa-trees 0.8.1, class sums
//! are kept in fixed-order arrays, so the same inputs always give the same tree.

use super::exact;
use crate::error::{ensure, Result};
use ndarray::Array2;
use rand::seq::index::sample;
use rand::Rng;
use serde::{Deserialize, Serialize};

/// Marks a leaf in [`Tree::feature`].
pub(crate) const LEAF: i32 = -1;

/// A fitted tree. Node 0 is the root; for an internal node `i`, rows with
/// `x[feature[i]] <= threshold[i]` go to node `child[i]`, others (and NaN) to
/// `child[i] + 1`; children always come after their parent. For a leaf,
/// `feature[i] == LEAF`, `threshold[i] == 0` and `child[i]` is the leaf's number `l`,
/// whose class fractions (weighted, summing to 1 up to f32 rounding) are
/// `votes[l*k .. (l+1)*k]`.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub(crate) struct Tree {
    pub feature: Vec<i32>,
    #[serde(with = "exact::vec")]
    pub threshold: Vec<f64>,
    pub child: Vec<u32>,
    #[serde(with = "exact::vec32")]
    pub votes: Vec<f64>,
}

/// Growth limits for one tree.
pub(crate) struct GrowParams {
    pub max_depth: Option<usize>,
    /// Minimum number of drawn samples (bootstrap multiplicity counted) in each leaf.
    pub min_samples_leaf: usize,
    /// Features tried at each split (drawn from `allowed` when smaller than it).
    pub features_per_split: usize,
}

/// The training rows of one tree: distinct row indices with their multiplicity (from
/// the bootstrap) and weight per class.
pub(crate) struct Sample<'a> {
    pub x: &'a Array2<f64>,
    pub y: &'a [usize],
    pub n_classes: usize,
    pub rows: Vec<usize>,
    pub counts: Vec<f64>,
    pub class_weight: &'a [f64],
}

fn gini(w: &[f64], total: f64) -> f64 {
    if total <= 0.0 {
        return 0.0;
    }
    1.0 - w.iter().map(|&c| (c / total) * (c / total)).sum::<f64>()
}

/// A threshold `t` with `lo <= t < hi` (so the training rows split the same way as at
/// the midpoint): the decimal of fewest significant digits inside the middle half of
/// `[lo, hi]`, keeping the model file short and readable; the midpoint if none is found.
fn short_threshold(lo: f64, hi: f64) -> f64 {
    let (a, b) = (lo + (hi - lo) * 0.25, hi - (hi - lo) * 0.25);
    let mid = lo * 0.5 + hi * 0.5;
    for digits in 1..=17 {
        if let Ok(t) = format!("{:.*e}", digits - 1, mid).parse::<f64>() {
            if a <= t && t <= b && lo <= t && t < hi {
                return t;
            }
        }
    }
    if lo <= mid && mid < hi {
        mid
    } else {
        lo
    }
}

struct Best {
    feature: usize,
    /// The split lies between these consecutive distinct values.
    lo: f64,
    hi: f64,
    score: f64,
    n_left: usize,
}

impl Tree {
    /// Grows a tree on `s`, trying features from `allowed` (ascending). Returns the tree
    /// and its impurity-decrease importance per feature (length `x.ncols()`, unnormalised:
    /// sum over splits of node-weight share times Gini decrease).
    pub fn grow<R: Rng>(
        s: &Sample,
        allowed: &[usize],
        p: &GrowParams,
        rng: &mut R,
    ) -> (Tree, Vec<f64>) {
        let k = s.n_classes;
        let mut t = Tree {
            feature: vec![],
            threshold: vec![],
            child: vec![],
            votes: vec![],
        };
        let mut importance = vec![0.0; s.x.ncols()];
        let w_of = |i: usize| s.counts[i] * s.class_weight[s.y[s.rows[i]]];
        let root_w: f64 = (0..s.rows.len()).map(w_of).sum();
        // stack of (node id, positions into s.rows, depth)
        let mut stack = vec![(0usize, (0..s.rows.len()).collect::<Vec<usize>>(), 0usize)];
        t.push_placeholder();
        let mut order: Vec<usize> = Vec::new();
        let mut cls = vec![0.0; k];
        let mut left_w = vec![0.0; k];
        while let Some((node, idx, depth)) = stack.pop() {
            cls.iter_mut().for_each(|c| *c = 0.0);
            let mut n_node = 0.0;
            for &i in &idx {
                cls[s.y[s.rows[i]]] += w_of(i);
                n_node += s.counts[i];
            }
            let w_node: f64 = cls.iter().sum();
            let g_node = gini(&cls, w_node);
            let may_split = g_node > 0.0
                && p.max_depth.map_or(true, |d| depth < d)
                && n_node >= 2.0 * p.min_samples_leaf as f64;
            let mut best: Option<Best> = None;
            if may_split {
                let tried: Vec<usize> = if p.features_per_split < allowed.len() {
                    let mut v: Vec<usize> = sample(rng, allowed.len(), p.features_per_split)
                        .into_iter()
                        .map(|j| allowed[j])
                        .collect();
                    v.sort_unstable();
                    v
                } else {
                    allowed.to_vec()
                };
                for &f in &tried {
                    order.clear();
                    order.extend_from_slice(&idx);
                    // stable sort: ties keep ascending row order
                    order.sort_by(|&a, &b| s.x[(s.rows[a], f)].total_cmp(&s.x[(s.rows[b], f)]));
                    left_w.iter_mut().for_each(|c| *c = 0.0);
                    let mut wl = 0.0;
                    let mut nl = 0.0;
                    for j in 0..order.len() - 1 {
                        let i = order[j];
                        let w = w_of(i);
                        left_w[s.y[s.rows[i]]] += w;
                        wl += w;
                        nl += s.counts[i];
                        let a = s.x[(s.rows[i], f)];
                        let b = s.x[(s.rows[order[j + 1]], f)];
                        if a >= b {
                            continue;
                        }
                        if nl < p.min_samples_leaf as f64 || n_node - nl < p.min_samples_leaf as f64
                        {
                            continue;
                        }
                        let wr = w_node - wl;
                        let mut gl = 1.0;
                        let mut gr = 1.0;
                        for c in 0..k {
                            let l = left_w[c];
                            let r = cls[c] - l;
                            gl -= (l / wl) * (l / wl);
                            gr -= (r / wr) * (r / wr);
                        }
                        let score = (wl * gl + wr * gr) / w_node;
                        if best.as_ref().map_or(true, |bb| score < bb.score) {
                            best = Some(Best {
                                feature: f,
                                lo: a,
                                hi: b,
                                score,
                                n_left: j + 1,
                            });
                        }
                    }
                }
            }
            match best {
                Some(b) if g_node - b.score > 1e-12 => {
                    let threshold = short_threshold(b.lo, b.hi);
                    importance[b.feature] += w_node / root_w * (g_node - b.score);
                    let (li, ri) = (t.push_placeholder(), t.push_placeholder());
                    t.feature[node] = b.feature as i32;
                    t.threshold[node] = threshold;
                    t.child[node] = li as u32;
                    let (l, r): (Vec<usize>, Vec<usize>) = idx
                        .iter()
                        .partition(|&&i| s.x[(s.rows[i], b.feature)] <= threshold);
                    debug_assert_eq!(l.len(), b.n_left);
                    stack.push((ri, r, depth + 1));
                    stack.push((li, l, depth + 1));
                }
                _ => {
                    let leaf = t.votes.len() / k;
                    t.child[node] = leaf as u32;
                    // f32 precision keeps the file short; see exact::vec32
                    t.votes
                        .extend(cls.iter().map(|&c| (c / w_node) as f32 as f64));
                }
            }
        }
        (t, importance)
    }

    fn push_placeholder(&mut self) -> usize {
        self.feature.push(LEAF);
        self.threshold.push(0.0);
        self.child.push(0);
        self.feature.len() - 1
    }

    /// The class fractions of the leaf `row` falls in (`row` has at least the tree's
    /// features; checked by [`Tree::check`] and the caller).
    #[inline]
    pub fn leaf_votes(&self, row: &[f64], k: usize) -> &[f64] {
        let mut i = 0usize;
        loop {
            let f = self.feature[i];
            if f == LEAF {
                let l = self.child[i] as usize * k;
                return &self.votes[l..l + k];
            }
            let go_left = row[f as usize] <= self.threshold[i]; // false for NaN
            i = self.child[i] as usize + if go_left { 0 } else { 1 };
        }
    }

    /// Checks the structure (for a tree read from a file): equal array lengths, children
    /// after their parent and in range, feature indices below `p`, leaf numbers in range
    /// of `votes` (k per leaf).
    pub fn check(&self, p: usize, k: usize) -> Result<()> {
        let n = self.feature.len();
        ensure(
            n >= 1 && self.threshold.len() == n && self.child.len() == n,
            || "tree arrays are empty or of unequal length".to_string(),
        )?;
        ensure(k >= 1 && self.votes.len() % k == 0, || {
            format!(
                "tree holds {} votes, not a multiple of {k} classes",
                self.votes.len()
            )
        })?;
        let leaves = self.votes.len() / k;
        for i in 0..n {
            if self.feature[i] == LEAF {
                ensure((self.child[i] as usize) < leaves, || {
                    format!("tree node {i} names leaf {} of {leaves}", self.child[i])
                })?;
            } else {
                let (l, r) = (self.child[i] as usize, self.child[i] as usize + 1);
                ensure(
                    self.feature[i] >= 0 && (self.feature[i] as usize) < p,
                    || format!("tree node {i} splits on feature {} of {p}", self.feature[i]),
                )?;
                ensure(l > i && r > i && l < n && r < n, || {
                    format!("tree node {i} has children {l}, {r} out of order or range")
                })?;
                ensure(self.threshold[i].is_finite(), || {
                    format!("tree node {i} has threshold {}", self.threshold[i])
                })?;
            }
        }
        ensure(
            self.votes.iter().all(|v| v.is_finite() && *v >= 0.0),
            || "tree votes must be finite and >= 0".to_string(),
        )
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use linfa::prelude::*;
    use rand::SeedableRng;
    use rand_chacha::ChaCha8Rng;
    use rand_distr::StandardNormal;

    fn two_class(n: usize, p: usize, seed: u64) -> (Array2<f64>, Vec<usize>) {
        let mut rng = ChaCha8Rng::seed_from_u64(seed);
        let mut x = Array2::zeros((n, p));
        let y: Vec<usize> = (0..n).map(|i| i % 2).collect();
        for i in 0..n {
            for j in 0..p {
                let z: f64 = rng.sample(StandardNormal);
                x[(i, j)] = z + if j < 2 {
                    1.2 * y[i] as f64 * (j + 1) as f64
                } else {
                    0.0
                };
            }
        }
        (x, y)
    }

    fn grow_all(x: &Array2<f64>, y: &[usize], max_depth: Option<usize>) -> Tree {
        let s = Sample {
            x,
            y,
            n_classes: 2,
            rows: (0..y.len()).collect(),
            counts: vec![1.0; y.len()],
            class_weight: &[1.0, 1.0],
        };
        let p = GrowParams {
            max_depth,
            min_samples_leaf: 1,
            features_per_split: x.ncols(),
        };
        let all: Vec<usize> = (0..x.ncols()).collect();
        Tree::grow(&s, &all, &p, &mut ChaCha8Rng::seed_from_u64(0)).0
    }

    /// Reference: linfa-trees 0.8.1 `DecisionTree` (Gini) on two classes, where its f32
    /// class sums cannot depend on hash order. With all features, unit weights and no
    /// bootstrap, the root split and both second-level splits must use the same feature
    /// and send the same training rows left. (linfa places a child's threshold midway to
    /// the next value of the *whole* training set, not of the node, so thresholds below
    /// the root may differ while partitioning the node's rows identically; and we store
    /// the shortest decimal inside the middle half of the gap, not the midpoint.)
    #[test]
    fn top_splits_match_linfa() {
        for seed in 0..5 {
            let (x, y) = two_class(300, 5, seed);
            let ours = grow_all(&x, &y, None);
            let ds = linfa::Dataset::new(x.clone(), ndarray::Array1::from(y.clone()));
            let theirs = linfa_trees::DecisionTree::params().fit(&ds).unwrap();
            let root = theirs.root_node();
            let (f, t, _) = root.split();
            assert_eq!(ours.feature[0] as usize, f, "seed {seed}");
            for r in 0..y.len() {
                let v = x[(r, f)];
                assert_eq!(v <= t, v <= ours.threshold[0], "seed {seed} row {r}");
            }
            let kids = root.children();
            for (side, ours_child) in [(0, ours.child[0]), (1, ours.child[0] + 1)] {
                let c = kids[side].as_ref().unwrap();
                let i = ours_child as usize;
                assert_eq!(
                    c.is_leaf(),
                    ours.feature[i] == LEAF,
                    "seed {seed} side {side}"
                );
                if c.is_leaf() {
                    continue;
                }
                let (f, t, _) = c.split();
                assert_eq!(ours.feature[i] as usize, f, "seed {seed} side {side}");
                let in_node = (0..y.len()).filter(|&r| {
                    (x[(r, ours.feature[0] as usize)] > ours.threshold[0]) == (side == 1)
                });
                for r in in_node {
                    let v = x[(r, f)];
                    assert_eq!(
                        v <= t,
                        v <= ours.threshold[i],
                        "seed {seed} side {side} row {r}"
                    );
                }
            }
        }
    }

    /// A tree grown to purity classifies its own distinct training rows exactly, and the
    /// stored structure passes `check`; a depth-1 stump has 3 nodes; thresholds are short.
    #[test]
    fn pure_tree_fits_training_rows() {
        let (x, y) = two_class(200, 4, 9);
        let t = grow_all(&x, &y, None);
        t.check(4, 2).unwrap();
        for (i, &c) in y.iter().enumerate() {
            let v = t.leaf_votes(x.row(i).as_slice().unwrap(), 2);
            assert_eq!(v[c], 1.0);
        }
        assert_eq!(grow_all(&x, &y, Some(1)).feature.len(), 3);
        assert_eq!(short_threshold(0.123456, 0.1301), 0.127); // middle half [0.12507, 0.12853]
        assert_eq!(short_threshold(1.0, 1.0 + f64::EPSILON), 1.0);
        assert_eq!(short_threshold(-3.99, -3.01), -3.5);
        let mut bad = t.clone();
        bad.child[0] = 0;
        assert!(bad.check(4, 2).is_err());
        assert!(t.check(1, 2).is_err());
    }

    /// Known answer: 4 points on one feature, classes (0,0,1,1) at x = (1,2,3,4): the
    /// best Gini split is at 2.5 with pure children; the node importance is the root's
    /// Gini 1 - 2 * 0.5^2 = 0.5 (weighted by node share 1).
    #[test]
    fn stump_known_answer() {
        let x = Array2::from_shape_vec((4, 1), vec![1.0, 2.0, 3.0, 4.0]).unwrap();
        let s = Sample {
            x: &x,
            y: &[0, 0, 1, 1],
            n_classes: 2,
            rows: vec![0, 1, 2, 3],
            counts: vec![1.0; 4],
            class_weight: &[1.0, 1.0],
        };
        let p = GrowParams {
            max_depth: None,
            min_samples_leaf: 1,
            features_per_split: 1,
        };
        let (t, imp) = Tree::grow(&s, &[0], &p, &mut ChaCha8Rng::seed_from_u64(0));
        assert_eq!(t.threshold[0], 2.5); // shortest decimal in [2.25, 2.75]
        assert!((imp[0] - 0.5).abs() < 1e-15);
        assert_eq!(t.leaf_votes(&[2.5], 2), &[1.0, 0.0]);
        assert_eq!(t.leaf_votes(&[2.6], 2), &[0.0, 1.0]);
        assert_eq!(t.leaf_votes(&[f64::NAN], 2), &[0.0, 1.0]);
    }
}
