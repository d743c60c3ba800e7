//! Prints the table of core/src/fleet/pivotal.rs: for each tabulated sample size the
//! unbiasing factor and the quantiles of the pivotal quantities of a complete Weibull
//! sample, by Monte Carlo with the fixed seed and sample count named there.
//! Run: `cargo bench -p shardlog-core --bench weibull_table`; paste the rows
//! between the TABLE-START and TABLE-END markers.

use shardlog_core::fleet::pivotal::{tabulate, REPLICATES, SEED, SIZES};

fn main() {
    for n in SIZES {
        let r = tabulate(n, REPLICATES, SEED);
        let f = |v: [f64; 4]| {
            v.iter()
                .map(|x| format!("{x:.4}"))
                .collect::<Vec<_>>()
                .join(", ")
        };
        println!(
            "    PivotalRow {{ n: {n}, unbiasing: {:.4}, q: [{}], t: [{}] }},",
            r.unbiasing,
            f(r.q),
            f(r.t)
        );
    }
}
