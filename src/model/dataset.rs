//! Feature rows, their class labels and the recording (group) each row came from, with
//! splits that keep every recording wholly on one side: tracks of one recording are
//! never split between training and testing.

use crate::error::{ensure, Error, Result};
use ndarray::Array2;
use rand::seq::SliceRandom;
use rand::SeedableRng;
use rand_chacha::ChaCha8Rng;
use std::collections::{BTreeMap, BTreeSet};

/// Rows of features with labels and groups. `labels[i]` indexes `class_names`;
/// `groups[i]` is the recording id of row `i`.
#[derive(Debug, Clone, PartialEq)]
pub struct Dataset {
    /// One row per track, one column per feature (all finite).
    pub features: Array2<f64>,
    /// Class index of each row, into `class_names`.
    pub labels: Vec<usize>,
    /// Recording id of each row.
    pub groups: Vec<String>,
    /// Class names, sorted alphabetically.
    pub class_names: Vec<String>,
    /// Column names of `features`.
    pub feature_names: Vec<String>,
}

/// Row indices of a split: `(train, test)`, each ascending.
pub type Split = (Vec<usize>, Vec<usize>);

impl Dataset {
    /// Builds a dataset from rows and string labels; the classes are the distinct labels,
    /// sorted alphabetically. Refuses ragged rows, non-finite values, empty labels and
    /// length mismatches.
    pub fn from_rows<L: AsRef<str>, G: AsRef<str>>(
        rows: &[Vec<f64>],
        labels: &[L],
        groups: &[G],
        feature_names: Vec<String>,
    ) -> Result<Dataset> {
        let class_names: Vec<String> = labels
            .iter()
            .map(|l| l.as_ref().to_string())
            .collect::<BTreeSet<_>>()
            .into_iter()
            .collect();
        Self::from_rows_with_classes(rows, labels, groups, feature_names, class_names)
    }

    /// As [`Dataset::from_rows`] but with a given class vocabulary (e.g. a model's), in
    /// the given order; a label outside it is refused.
    pub fn from_rows_with_classes<L: AsRef<str>, G: AsRef<str>>(
        rows: &[Vec<f64>],
        labels: &[L],
        groups: &[G],
        feature_names: Vec<String>,
        class_names: Vec<String>,
    ) -> Result<Dataset> {
        let p = feature_names.len();
        ensure(
            labels.len() == rows.len() && groups.len() == rows.len(),
            || {
                format!(
                    "dataset: {} rows, {} labels and {} groups; the three counts must be equal",
                    rows.len(),
                    labels.len(),
                    groups.len()
                )
            },
        )?;
        let mut features = Array2::zeros((rows.len(), p));
        for (i, r) in rows.iter().enumerate() {
            ensure(r.len() == p, || {
                format!(
                    "dataset: row {i} has {} values, expected {p} (one per feature)",
                    r.len()
                )
            })?;
            for (j, &v) in r.iter().enumerate() {
                features[(i, j)] = v;
            }
        }
        let index: BTreeMap<&str, usize> = class_names
            .iter()
            .enumerate()
            .map(|(i, c)| (c.as_str(), i))
            .collect();
        let mut ids = Vec::with_capacity(labels.len());
        for (i, l) in labels.iter().enumerate() {
            let id = index.get(l.as_ref()).ok_or_else(|| {
                Error::Invalid(format!(
                    "dataset: row {i} has label '{}', not one of the classes [{}]",
                    l.as_ref(),
                    class_names.join(", ")
                ))
            })?;
            ids.push(*id);
        }
        Self::new(
            features,
            ids,
            groups.iter().map(|g| g.as_ref().to_string()).collect(),
            class_names,
            feature_names,
        )
    }

    /// Builds a dataset from its parts, checking that they agree: at least one row and
    /// one feature, finite values, labels below `class_names.len()`, distinct non-empty
    /// class names.
    pub fn new(
        features: Array2<f64>,
        labels: Vec<usize>,
        groups: Vec<String>,
        class_names: Vec<String>,
        feature_names: Vec<String>,
    ) -> Result<Dataset> {
        let (n, p) = features.dim();
        ensure(n >= 1 && p >= 1, || {
            format!("dataset: {n} rows x {p} features; at least 1 x 1 is needed")
        })?;
        ensure(feature_names.len() == p, || {
            format!(
                "dataset: {} feature names for {p} columns",
                feature_names.len()
            )
        })?;
        ensure(labels.len() == n && groups.len() == n, || {
            format!(
                "dataset: {n} rows, {} labels and {} groups; the three counts must be equal",
                labels.len(),
                groups.len()
            )
        })?;
        let distinct: BTreeSet<&String> = class_names.iter().collect();
        ensure(
            !class_names.is_empty()
                && distinct.len() == class_names.len()
                && class_names.iter().all(|c| !c.is_empty()),
            || format!("dataset: class names {class_names:?} must be distinct and non-empty"),
        )?;
        if let Some((i, &l)) = labels
            .iter()
            .enumerate()
            .find(|(_, &l)| l >= class_names.len())
        {
            return Err(Error::Invalid(format!(
                "dataset: row {i} has class index {l}, allowed 0..{}",
                class_names.len()
            )));
        }
        if let Some(((i, j), v)) = features.indexed_iter().find(|(_, v)| !v.is_finite()) {
            return Err(Error::Invalid(format!(
                "dataset: row {i}, feature '{}' is {v}; features must be finite",
                feature_names[j]
            )));
        }
        Ok(Dataset {
            features,
            labels,
            groups,
            class_names,
            feature_names,
        })
    }

    /// Number of rows.
    pub fn len(&self) -> usize {
        self.labels.len()
    }

    /// Always false: a dataset holds at least one row.
    pub fn is_empty(&self) -> bool {
        self.labels.is_empty()
    }

    /// Number of classes.
    pub fn n_classes(&self) -> usize {
        self.class_names.len()
    }

    /// Distinct group ids, sorted.
    pub fn group_names(&self) -> Vec<String> {
        self.groups
            .iter()
            .cloned()
            .collect::<BTreeSet<_>>()
            .into_iter()
            .collect()
    }

    /// Row indices of each group, groups sorted by name.
    fn group_rows(&self) -> Vec<(String, Vec<usize>)> {
        let mut m: BTreeMap<&str, Vec<usize>> = BTreeMap::new();
        for (i, g) in self.groups.iter().enumerate() {
            m.entry(g.as_str()).or_default().push(i);
        }
        m.into_iter().map(|(g, r)| (g.to_string(), r)).collect()
    }

    /// Holds out whole groups: about `fraction` of the rows (counted by rows, at least
    /// one group, never all groups) go to the test side. Stratified where possible:
    /// first, for each class in order, a group holding it is held out if the class is not
    /// yet in the test part and another group left in training still holds it; then
    /// groups are added in a seeded random order until the test part reaches `fraction`
    /// of the rows. Same seed, same split. `fraction` in (0, 1); needs >= 2 groups.
    pub fn grouped_holdout(&self, fraction: f64, seed: u64) -> Result<Split> {
        ensure(fraction > 0.0 && fraction < 1.0, || {
            format!("holdout fraction {fraction} is out of range; allowed (0, 1)")
        })?;
        let mut groups = self.group_rows();
        ensure(groups.len() >= 2, || {
            format!(
                "holdout needs at least 2 recordings (groups), found {}",
                groups.len()
            )
        })?;
        let mut rng = ChaCha8Rng::seed_from_u64(seed);
        groups.shuffle(&mut rng);
        let k = self.n_classes();
        let classes_of: Vec<Vec<bool>> = groups
            .iter()
            .map(|(_, rows)| {
                let mut has = vec![false; k];
                for &r in rows {
                    has[self.labels[r]] = true;
                }
                has
            })
            .collect();
        let g = groups.len();
        let mut test = vec![false; g];
        let mut n_test_groups = 0;
        let mut test_rows = 0usize;
        let target = fraction * self.len() as f64;
        #[allow(clippy::needless_range_loop)]
        for c in 0..k {
            let covered = (0..g).any(|i| test[i] && classes_of[i][c]);
            if covered || n_test_groups + 1 >= g || test_rows as f64 >= target {
                continue;
            }
            let holders: Vec<usize> = (0..g).filter(|&i| !test[i] && classes_of[i][c]).collect();
            if holders.len() >= 2 {
                let i = holders[0];
                test[i] = true;
                n_test_groups += 1;
                test_rows += groups[i].1.len();
            }
        }
        for i in 0..g {
            if (test_rows as f64) >= target && n_test_groups >= 1 {
                break;
            }
            if test[i] || n_test_groups + 1 >= g {
                continue;
            }
            test[i] = true;
            n_test_groups += 1;
            test_rows += groups[i].1.len();
        }
        let mut tr = Vec::new();
        let mut te = Vec::new();
        for (i, (_, rows)) in groups.iter().enumerate() {
            if test[i] {
                te.extend_from_slice(rows);
            } else {
                tr.extend_from_slice(rows);
            }
        }
        tr.sort_unstable();
        te.sort_unstable();
        Ok((tr, te))
    }

    /// `k` folds of whole groups: groups are shuffled with the seed, then placed largest
    /// first (stable) into the fold with the fewest rows so far (lowest index on ties).
    /// Returns one `(train, test)` pair per fold. `k` in 2..=number of groups.
    pub fn grouped_kfold(&self, k: usize, seed: u64) -> Result<Vec<Split>> {
        let mut groups = self.group_rows();
        ensure(k >= 2 && k <= groups.len(), || {
            format!(
                "k-fold: k = {k} folds is out of range; expected 2 to {} (the number of recordings)",
                groups.len()
            )
        })?;
        let mut rng = ChaCha8Rng::seed_from_u64(seed);
        groups.shuffle(&mut rng);
        groups.sort_by_key(|g| std::cmp::Reverse(g.1.len()));
        let mut fold_rows = vec![0usize; k];
        let mut fold_of = vec![0usize; self.len()];
        for (_, rows) in &groups {
            let f = (0..k).min_by_key(|&f| (fold_rows[f], f)).unwrap_or(0);
            fold_rows[f] += rows.len();
            for &r in rows {
                fold_of[r] = f;
            }
        }
        Ok((0..k)
            .map(|f| {
                let (te, tr): (Vec<usize>, Vec<usize>) =
                    (0..self.len()).partition(|&r| fold_of[r] == f);
                (tr, te)
            })
            .collect())
    }

    /// Splits by an explicit list of test groups (e.g. the split another tool made); every
    /// name must be a group of this dataset.
    pub fn split_by_groups<S: AsRef<str>>(&self, test_groups: &[S]) -> Result<Split> {
        let known: BTreeSet<&str> = self.groups.iter().map(|g| g.as_str()).collect();
        let mut wanted = BTreeSet::new();
        for g in test_groups {
            let g = g.as_ref();
            ensure(known.contains(g), || {
                format!("test recording '{g}' is not in the dataset")
            })?;
            wanted.insert(g);
        }
        Ok((0..self.len()).partition(|&r| !wanted.contains(self.groups[r].as_str())))
    }

    /// Number of rows of each class among `rows`.
    pub fn class_counts(&self, rows: &[usize]) -> Vec<usize> {
        let mut c = vec![0; self.n_classes()];
        for &r in rows {
            c[self.labels[r]] += 1;
        }
        c
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// 12 recordings of 3 classes, of varied sizes; recording r holds class r % 3 and,
    /// for r % 4 == 0, also some rows of class (r + 1) % 3.
    fn toy() -> Dataset {
        let mut rows = Vec::new();
        let mut labels = Vec::new();
        let mut groups = Vec::new();
        for r in 0..12 {
            for i in 0..(3 + r % 5) {
                rows.push(vec![r as f64, i as f64]);
                labels.push(["bird", "clutter", "rotorcraft"][r % 3]);
                groups.push(format!("rec{r:02}"));
            }
            if r % 4 == 0 {
                rows.push(vec![r as f64, -1.0]);
                labels.push(["bird", "clutter", "rotorcraft"][(r + 1) % 3]);
                groups.push(format!("rec{r:02}"));
            }
        }
        Dataset::from_rows(&rows, &labels, &groups, vec!["a".into(), "b".into()]).unwrap()
    }

    fn groups_of(d: &Dataset, rows: &[usize]) -> BTreeSet<String> {
        rows.iter().map(|&r| d.groups[r].clone()).collect()
    }

    #[test]
    fn classes_sorted_and_bad_input_refused() {
        let d = toy();
        assert_eq!(d.class_names, ["bird", "clutter", "rotorcraft"]);
        let e = Dataset::from_rows(&[vec![f64::NAN]], &["x"], &["g"], vec!["f".into()]);
        assert!(e.unwrap_err().to_string().contains("feature 'f' is NaN"));
        let e = Dataset::from_rows(&[vec![1.0, 2.0]], &["x"], &["g"], vec!["f".into()]);
        assert!(e.is_err());
    }

    #[test]
    fn holdout_keeps_groups_whole_and_stratifies() {
        let d = toy();
        for seed in 0..20 {
            let (tr, te) = d.grouped_holdout(0.3, seed).unwrap();
            assert_eq!(tr.len() + te.len(), d.len());
            let (gtr, gte) = (groups_of(&d, &tr), groups_of(&d, &te));
            assert!(gtr.is_disjoint(&gte), "seed {seed}");
            // every class in both parts (possible here: each class has 4 recordings)
            assert!(d.class_counts(&te).iter().all(|&c| c > 0), "seed {seed}");
            assert!(d.class_counts(&tr).iter().all(|&c| c > 0), "seed {seed}");
            let f = te.len() as f64 / d.len() as f64;
            assert!((0.3..0.6).contains(&f), "seed {seed}: fraction {f}");
        }
    }

    #[test]
    fn splits_are_deterministic_and_seed_dependent() {
        let d = toy();
        assert_eq!(
            d.grouped_holdout(0.3, 7).unwrap(),
            d.grouped_holdout(0.3, 7).unwrap()
        );
        let distinct: BTreeSet<_> = (0..10)
            .map(|s| d.grouped_holdout(0.3, s).unwrap().1)
            .collect();
        assert!(distinct.len() > 1);
        assert_eq!(
            d.grouped_kfold(4, 3).unwrap(),
            d.grouped_kfold(4, 3).unwrap()
        );
    }

    #[test]
    fn kfold_partitions_groups() {
        let d = toy();
        let folds = d.grouped_kfold(4, 1).unwrap();
        let mut seen = vec![0; d.len()];
        for (tr, te) in &folds {
            assert!(groups_of(&d, tr).is_disjoint(&groups_of(&d, te)));
            assert_eq!(tr.len() + te.len(), d.len());
            for &r in te {
                seen[r] += 1;
            }
        }
        assert!(seen.iter().all(|&s| s == 1), "each row tested exactly once");
        assert!(d.grouped_kfold(1, 0).is_err());
        assert!(d.grouped_kfold(13, 0).is_err());
    }

    #[test]
    fn explicit_split_and_refusals() {
        let d = toy();
        let (tr, te) = d.split_by_groups(&["rec03", "rec07"]).unwrap();
        assert_eq!(
            groups_of(&d, &te),
            ["rec03", "rec07"].iter().map(|s| s.to_string()).collect()
        );
        assert_eq!(tr.len() + te.len(), d.len());
        assert!(d
            .split_by_groups(&["nope"])
            .unwrap_err()
            .to_string()
            .contains("'nope'"));
        assert!(d.grouped_holdout(0.0, 1).is_err());
        assert!(d.grouped_holdout(1.0, 1).is_err());
    }
}
