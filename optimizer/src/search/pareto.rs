//! The cost/error Pareto front of the verified designs a search found.

use super::Candidate;

/// The cost/error Pareto front of verified designs, cheapest first, at
/// most twelve.
pub(super) fn front(mut found: Vec<Candidate>) -> Vec<Candidate> {
    found.sort_by(|a, b| {
        a.costing
            .total
            .total_cmp(&b.costing.total)
            .then(a.analysis.basis_pct_fs.total_cmp(&b.analysis.basis_pct_fs))
    });
    let mut out: Vec<Candidate> = Vec::new();
    for c in found {
        if out.iter().any(|o| o.design == c.design) {
            continue;
        }
        let dominated = out
            .iter()
            .any(|o| o.analysis.basis_pct_fs <= c.analysis.basis_pct_fs + 1e-12);
        if !dominated {
            out.push(c);
        }
        if out.len() >= 12 {
            break;
        }
    }
    out
}
