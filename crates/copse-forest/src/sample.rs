//! Drawing each tree's cases as a vector of case weights over the shared data, so no
//! tree ever copies the data: bootstrap counts, subsample indicators, or all ones.
use crate::error::{Error, ErrorKind, Result};
use crate::outcome::{Outcome, MISSING};
use crate::settings::Sampling;
use rand::RngExt;

/// Knows which rows may be drawn and how; shared read-only by all threads.
#[derive(Debug, Clone)]
pub(crate) struct Sampler {
    sampling: Sampling,
    /// Rows with a known outcome; with balanced sampling, one group per class present.
    groups: Vec<Vec<u32>>,
    /// Cases drawn from each group.
    draws: usize,
}

impl Sampler {
    /// A sampler over the rows of `outcome` that have a known outcome.
    ///
    /// # Errors
    /// `NoTargets` when fewer than two rows have an outcome; `InvalidSetting` for
    /// balanced sampling on a regression outcome.
    pub(crate) fn new(outcome: &Outcome, sampling: Sampling, balanced: bool) -> Result<Self> {
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
        let groups = if balanced {
            let Outcome::Classes { codes, labels } = outcome else {
                return Err(Error::new(
                    ErrorKind::InvalidSetting,
                    "balanced sampling draws cases per class; it needs a class outcome",
                ));
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
        let smallest = groups.iter().map(Vec::len).min().unwrap_or(0);
        let draws = match sampling {
            Sampling::Bootstrap | Sampling::Whole => smallest,
            Sampling::Subsample(f) => ((f * smallest as f64).round() as usize).clamp(1, smallest),
        };
        Ok(Sampler {
            sampling,
            groups,
            draws,
        })
    }

    /// Fills `weights` (one per data row) with this tree's case weights; `scratch` is a
    /// reusable buffer. Rows never drawn get weight 0: they are out of bag.
    pub(crate) fn draw<R: RngExt + ?Sized>(
        &self,
        rng: &mut R,
        weights: &mut [f64],
        scratch: &mut Vec<u32>,
    ) {
        weights.iter_mut().for_each(|w| *w = 0.0);
        for group in &self.groups {
            match self.sampling {
                Sampling::Whole => group.iter().for_each(|&i| weights[i as usize] = 1.0),
                Sampling::Bootstrap => {
                    for _ in 0..self.draws {
                        let i = group[rng.random_range(0..group.len())];
                        weights[i as usize] += 1.0;
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
                        weights[scratch[k] as usize] = 1.0;
                    }
                }
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
        let s = Sampler::new(&outcome, Sampling::Bootstrap, false).expect("a value");
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
        let s = Sampler::new(&outcome, Sampling::Bootstrap, true).expect("a value");
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

        let s = Sampler::new(&outcome, Sampling::Subsample(0.5), true).expect("a value");
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
        assert!(Sampler::new(&outcome, Sampling::Bootstrap, true).is_err());
    }
}
