//! Run settings: the environment variables that shape a run, the forest every
//! workload trains, and the thread pools the figures are measured on.
use copse_forest::{FeaturesPerSplit, ForestSettings, Sampling, TreeRules};

/// Trees per forest in every workload (issue 5).
pub const TREES: usize = 100;
/// Inputs tried per split (issue 5).
pub const K: usize = 4;
/// Seed of the training data.
pub const TRAIN_SEED: u64 = 1;
/// Seed of the scoring data.
pub const SCORE_SEED: u64 = 2;
/// Environment variable that makes this executable run only T1M and report.
pub const CHILD: &str = "COPSE_BENCH_CHILD";

/// Run settings from the environment.
pub struct Config {
    pub scale: f64,
    pub threads: usize,
    skip: Vec<String>,
    pub repeat: usize,
}

impl Config {
    pub fn from_env() -> Self {
        let scale = std::env::var("COPSE_BENCH_SCALE")
            .ok()
            .and_then(|s| s.parse::<f64>().ok())
            .filter(|s| *s > 0.0)
            .unwrap_or(1.0);
        let threads = std::env::var("COPSE_BENCH_THREADS")
            .ok()
            .and_then(|s| s.parse::<usize>().ok())
            .filter(|t| *t > 0)
            .unwrap_or_else(cores);
        let skip = std::env::var("COPSE_BENCH_SKIP")
            .unwrap_or_default()
            .split(',')
            .map(|s| s.trim().to_lowercase())
            .filter(|s| !s.is_empty())
            .collect();
        let repeat = std::env::var("COPSE_BENCH_REPEAT")
            .ok()
            .and_then(|s| s.parse::<usize>().ok())
            .filter(|r| *r > 0)
            .unwrap_or(1);
        Config {
            scale,
            threads,
            skip,
            repeat,
        }
    }

    /// `n` rows at this run's scale (never fewer than 100).
    pub fn rows(&self, n: usize) -> usize {
        ((n as f64 * self.scale).round() as usize).max(100)
    }

    /// Whether `COPSE_BENCH_SKIP` names the workload.
    pub fn skip(&self, name: &str) -> bool {
        self.skip.iter().any(|s| s == name)
    }
}

pub fn cores() -> usize {
    std::thread::available_parallelism().map_or(1, |n| n.get())
}

pub fn pool(threads: usize) -> rayon::ThreadPool {
    rayon::ThreadPoolBuilder::new()
        .num_threads(threads)
        .build()
        .expect("a thread pool")
}

/// The forest every workload trains: TREES trees, K inputs per split, min leaf 1,
/// bootstrap draws.
pub fn settings() -> ForestSettings {
    ForestSettings {
        trees: TREES,
        features_per_split: FeaturesPerSplit::Count(K),
        sampling: Sampling::Bootstrap,
        tree: TreeRules {
            min_leaf: 1.0,
            ..TreeRules::default()
        },
        seed: 1,
        ..ForestSettings::default()
    }
}
