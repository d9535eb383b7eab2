//! I100k: the out-of-bag permutation importance measured with the T100k training, set
//! beside the node visits it needs at the scoring kernel's rate.
use crate::config::Config;
use crate::fit::Fit;
use crate::table::Table;

/// Adds the I100k section when the all-threads T100k run measured importance;
/// `kernel_ns_per_visit` is the scoring kernel's ns per node visit per core on all
/// threads, so it comes after S1M.
pub fn section(cfg: &Config, ta: &Fit, kernel_ns_per_visit: f64, table: &mut Table) {
    let threads = cfg.threads;
    if let Some(imp) = ta.importance {
        table.section("I100k: out-of-bag permutation importance, 20 inputs, T100k model");
        let visits = importance_visits(ta);
        let limit = visits * kernel_ns_per_visit / threads as f64 / 1e9;
        table.ratio_row(
            &format!("importance wall, {threads} threads (s)"),
            imp.as_secs_f64(),
            limit,
            "<= 2x T100k growing",
        );
        table.ratio_row(
            "out-of-bag importance / T100k growing",
            imp.as_secs_f64() / ta.grow.as_secs_f64(),
            limit / ta.grow.as_secs_f64(),
            "<= 1.5x (issue 19)",
        );
        table.note(&format!(
            "limit = about {visits:.3e} node visits (trees x inputs x out-of-bag rows x \
             mean leaf depth, an upper estimate: only rows whose path tests the input are \
             re-scored) at the scoring kernel's rate; the ratio's limit is that wall over \
             the same run's T100k growing wall"
        ));
    }
}

/// Node visits of the out-of-bag importance pass, estimated: trees x inputs x
/// out-of-bag rows x the mean visit depth of the training cases.
fn importance_visits(fit: &Fit) -> f64 {
    fit.oob_rows as f64 * fit.forest.n_features() as f64 * fit.mean_depth
}
