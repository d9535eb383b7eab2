//! Drawing each tree's cases as a vector of draw counts over the shared data, so no
//! tree ever copies the data: bootstrap counts, subsample indicators, or all ones;
//! with case weights, draws in proportion to the weights; with row groups, whole
//! groups drawn (see [`crate::case_weights`] for why).
use crate::error::{Error, ErrorKind, Result};
use crate::outcome::{Outcome, MISSING};
use crate::settings::Sampling;
use rand::RngExt;

/// Knows which rows may be drawn and how; shared read-only by all threads.
#[derive(Debug, Clone)]
pub(crate) struct Sampler<'w> {
    sampling: Sampling,
    /// Rows with a known outcome (and, with weighted draws, a positive weight); with
    /// balanced sampling, one group per class present.
    groups: Vec<Vec<u32>>,
    /// Cases drawn from each group (or row groups drawn, with `clusters`).
    draws: usize,
    /// With weighted draws: each group's running totals of its rows' weights.
    cumulative: Option<Vec<Vec<f64>>>,
    /// With row groups: the rows of each group, drawn whole.
    clusters: Option<Vec<Vec<u32>>>,
    /// Case weights that multiply the draw counts: with row groups (a drawn group's
    /// rows enter with their weights) and without resampling.
    scale: Option<&'w [f64]>,
}

impl<'w> Sampler<'w> {
    /// A sampler over the rows of `outcome` that have a known outcome, with case
    /// `weights` (checked, not all 1) and row groups `clusters` (checked) if given.
    ///
    /// # Errors
    /// `NoTargets` when fewer than two rows have an outcome; `InvalidSetting` for
    /// balanced sampling on a regression outcome or with row groups, and for
    /// subsampling with case weights but no row groups.
    pub(crate) fn new(
        outcome: &Outcome,
        sampling: Sampling,
        balanced: bool,
        weights: Option<&'w [f64]>,
        clusters: Option<Vec<Vec<u32>>>,
    ) -> Result<Self> {
        let labelled: Vec<u32> = (0..outcome.len())
            .filter(|&i| !outcome.is_missing(i))
            .map(|i| i as u32)
            .collect();
        if labelled.len() < 2 {
            return Err(Error::new(
                ErrorKind::NoTargets,
                format!(
                    "{} a known outcome; a forest needs at least two",
                    if labelled.is_empty() {
                        "no row has"
                    } else {
                        "only one row has"
                    }
                ),
            ));
        }
        let bad = |m: &str| Err(Error::new(ErrorKind::InvalidSetting, m.to_string()));
        if let Some(c) = clusters {
            if balanced {
                return bad("balanced sampling draws rows by class, and row groups may mix                      classes; use one or the other");
            }
            let draws = match sampling {
                Sampling::Bootstrap | Sampling::Whole => c.len(),
                Sampling::Subsample(f) => ((f * c.len() as f64).round() as usize).clamp(1, c.len()),
            };
            return Ok(Sampler {
                sampling,
                groups: Vec::new(),
                draws,
                cumulative: None,
                clusters: Some(c),
                scale: weights,
            });
        }
        let groups = if balanced {
            let Outcome::Classes { codes, labels } = outcome else {
                return bad("balanced sampling draws cases per class; it needs a class outcome");
            };
            let mut g = vec![Vec::new(); labels.len()];
            for &i in &labelled {
                let c = codes[i as usize];
                if c != MISSING {
                    g[c as usize].push(i);
                }
            }
            g.retain(|v| !v.is_empty());
            g
        } else {
            vec![labelled]
        };
        if let (Some(w), Sampling::Bootstrap) = (weights, sampling) {
            // Rows of weight 0 are never drawn; a class whose rows all weigh nothing
            // has nothing to draw.
            let groups: Vec<Vec<u32>> = groups
                .into_iter()
                .map(|g| g.into_iter().filter(|&i| w[i as usize] > 0.0).collect())
                .filter(|g: &Vec<u32>| !g.is_empty())
                .collect();
            let cumulative: Vec<Vec<f64>> = groups
                .iter()
                .map(|g| {
                    let mut run = 0.0;
                    g.iter()
                        .map(|&i| {
                            run += w[i as usize];
                            run
                        })
                        .collect()
                })
                .collect();
            // Each group draws as many cases as the lightest group weighs (all of
            // them without balancing): weights count cases.
            let lightest = cumulative
                .iter()
                .filter_map(|c| c.last().copied())
                .fold(f64::INFINITY, f64::min);
            return Ok(Sampler {
                sampling,
                groups,
                draws: (lightest.round() as usize).max(1),
                cumulative: Some(cumulative),
                clusters: None,
                scale: None,
            });
        }
        if weights.is_some() && matches!(sampling, Sampling::Subsample(_)) {
            return bad("subsampling draws rows without replacement, which case weights do not                  define; use bootstrap sampling or none with case weights");
        }
        let smallest = groups.iter().map(Vec::len).min().unwrap_or(0);
        let draws = match sampling {
            Sampling::Bootstrap | Sampling::Whole => smallest,
            Sampling::Subsample(f) => ((f * smallest as f64).round() as usize).clamp(1, smallest),
        };
        Ok(Sampler {
            sampling,
            groups,
            draws,
            cumulative: None,
            clusters: None,
            scale: weights,
        })
    }

    /// Fills `counts` (one per data row) with this tree's draw counts; `scratch` is a
    /// reusable buffer. Rows never drawn get 0: they are out of bag (with row groups, a
    /// row is drawn whenever its group is).
    pub(crate) fn draw<R: RngExt + ?Sized>(
        &self,
        rng: &mut R,
        counts: &mut [f64],
        scratch: &mut Vec<u32>,
    ) {
        counts.iter_mut().for_each(|w| *w = 0.0);
        if let Some(clusters) = &self.clusters {
            self.draw_clusters(rng, clusters, counts, scratch);
            return;
        }
        if let Some(cumulative) = &self.cumulative {
            for (group, cum) in self.groups.iter().zip(cumulative) {
                let total = cum.last().copied().unwrap_or(0.0);
                for _ in 0..self.draws {
                    // Row j is drawn when u falls in [cum[j-1], cum[j]), a stretch as
                    // long as its weight.
                    let u = rng.random::<f64>() * total;
                    let j = cum.partition_point(|&c| c <= u).min(group.len() - 1);
                    counts[group[j] as usize] += 1.0;
                }
            }
            return;
        }
        for group in &self.groups {
            match self.sampling {
                Sampling::Whole => group.iter().for_each(|&i| counts[i as usize] = 1.0),
                Sampling::Bootstrap => {
                    for _ in 0..self.draws {
                        let i = group[rng.random_range(0..group.len())];
                        counts[i as usize] += 1.0;
                    }
                }
                Sampling::Subsample(_) => {
                    // Partial Fisher-Yates shuffle: the first `draws` entries are a
                    // uniform sample without replacement.
                    scratch.clear();
                    scratch.extend_from_slice(group);
                    for k in 0..self.draws {
                        let j = rng.random_range(k..scratch.len());
                        scratch.swap(k, j);
                        counts[scratch[k] as usize] = 1.0;
                    }
                }
            }
        }
    }

    /// Draws whole row groups: with replacement (each draw adds one to every row of
    /// the group), without (a partial shuffle of the groups), or all of them.
    fn draw_clusters<R: RngExt + ?Sized>(
        &self,
        rng: &mut R,
        clusters: &[Vec<u32>],
        counts: &mut [f64],
        scratch: &mut Vec<u32>,
    ) {
        let mut add = |c: &[u32]| c.iter().for_each(|&i| counts[i as usize] += 1.0);
        match self.sampling {
            Sampling::Whole => clusters.iter().for_each(|c| add(c)),
            Sampling::Bootstrap => {
                for _ in 0..self.draws {
                    add(&clusters[rng.random_range(0..clusters.len())]);
                }
            }
            Sampling::Subsample(_) => {
                scratch.clear();
                scratch.extend(0..clusters.len() as u32);
                for k in 0..self.draws {
                    let j = rng.random_range(k..scratch.len());
                    scratch.swap(k, j);
                    add(&clusters[scratch[k] as usize]);
                }
            }
        }
    }

    /// The case weights a tree grows with: the draw counts themselves, or, when the
    /// weights multiply the counts (row groups, no resampling), their products written
    /// into `buf`.
    pub(crate) fn case_weights<'b>(&self, counts: &'b [f64], buf: &'b mut Vec<f64>) -> &'b [f64] {
        match self.scale {
            None => counts,
            Some(w) => {
                buf.clear();
                buf.extend(counts.iter().zip(w).map(|(c, w)| c * w));
                buf
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use rand::SeedableRng;
    use rand_xoshiro::Xoshiro256PlusPlus;

    #[test]
    fn bootstrap_draws_n_cases_and_leaves_about_a_third_out() {
        let n = 2000;
        let outcome = Outcome::Values((0..n).map(|i| i as f64).collect());
        let s = Sampler::new(&outcome, Sampling::Bootstrap, false, None, None).expect("a value");
        let mut rng = Xoshiro256PlusPlus::seed_from_u64(3);
        let mut w = vec![0.0; n];
        s.draw(&mut rng, &mut w, &mut Vec::new());
        assert_eq!(w.iter().sum::<f64>(), n as f64);
        let out = w.iter().filter(|&&x| x == 0.0).count() as f64 / n as f64;
        // (1 - 1/n)^n -> e^-1 = 0.368 (Breiman 1996, "Out-of-bag estimation"); the
        // share is a mean of n weakly dependent indicators, sd about
        // sqrt(0.368 * 0.632 / 2000) = 0.011, so 4 sd = 0.044.
        assert!((out - 0.368).abs() < 0.044, "{out}");
    }

    #[test]
    fn balanced_draws_the_smallest_class_size_from_each_class() {
        let mut codes = vec![0u32; 90];
        codes.extend(vec![1u32; 10]);
        codes.push(MISSING);
        let outcome = Outcome::Classes {
            codes: codes.clone(),
            labels: vec!["a".into(), "b".into()],
        };
        let s = Sampler::new(&outcome, Sampling::Bootstrap, true, None, None).expect("a value");
        let mut w = vec![0.0; codes.len()];
        s.draw(
            &mut Xoshiro256PlusPlus::seed_from_u64(1),
            &mut w,
            &mut Vec::new(),
        );
        let per = |w: &[f64], c: u32| -> f64 {
            (0..codes.len())
                .filter(|&i| codes[i] == c)
                .map(|i| w[i])
                .sum()
        };
        assert_eq!(per(&w, 0), 10.0);
        assert_eq!(per(&w, 1), 10.0);
        assert_eq!(w[100], 0.0);

        let s =
            Sampler::new(&outcome, Sampling::Subsample(0.5), true, None, None).expect("a value");
        s.draw(
            &mut Xoshiro256PlusPlus::seed_from_u64(1),
            &mut w,
            &mut Vec::new(),
        );
        assert_eq!(per(&w, 0), 5.0);
        assert_eq!(per(&w, 1), 5.0);
        assert!(w.iter().all(|&x| x == 0.0 || x == 1.0));
    }

    #[test]
    fn regression_cannot_be_balanced() {
        let outcome = Outcome::Values(vec![1.0, 2.0, 3.0]);
        assert!(Sampler::new(&outcome, Sampling::Bootstrap, true, None, None).is_err());
    }
}
