//! Which of a sheet's rows belong together: the `sample` and `cluster` columns turned into
//! the grouping of the multilevel model, with the sheet's checks (a sample in two clusters
//! is an error; rows of one sample with different n are a warning) and the count of
//! respondents once per sample.

use crate::error::CellProblem;
use crate::pool::multilevel::Grouping;
use crate::sheet::StudyRecord;
use crate::warning::Warning;
use std::collections::HashMap;

/// The key rows are grouped by: their value, with case and surrounding spaces ignored.
fn key(s: &str) -> String {
    s.trim().to_lowercase()
}

/// A row's sample key (its own row when it names none).
fn sample_key(i: usize, r: &StudyRecord) -> String {
    match &r.sample {
        Some(s) => format!("s\u{1}{}", key(s)),
        None => format!("r\u{1}{i}"),
    }
}

/// A row's cluster key: its cluster, else its sample (a sample without a cluster is its own
/// cluster), else its own row.
fn cluster_key(i: usize, r: &StudyRecord) -> String {
    match (&r.cluster, &r.sample) {
        (Some(c), _) => format!("c\u{1}{}", key(c)),
        (None, Some(s)) => format!("s\u{1}{}", key(s)),
        (None, None) => format!("r\u{1}{i}"),
    }
}

/// Number the keys in order of first appearance.
fn number(keys: &[String]) -> Vec<usize> {
    let mut ids: HashMap<&str, usize> = HashMap::with_capacity(keys.len());
    keys.iter()
        .map(|k| {
            let next = ids.len();
            *ids.entry(k.as_str()).or_insert(next)
        })
        .collect()
}

/// The grouping of the records.
pub fn grouping(records: &[StudyRecord]) -> Grouping {
    let samples: Vec<String> = records
        .iter()
        .enumerate()
        .map(|(i, r)| sample_key(i, r))
        .collect();
    let clusters: Vec<String> = records
        .iter()
        .enumerate()
        .map(|(i, r)| cluster_key(i, r))
        .collect();
    Grouping {
        cluster: number(&clusters),
        sample: number(&samples),
    }
}

/// True when two rows share a cluster (and so possibly a sample).
pub fn shares_any(g: &Grouping) -> bool {
    g.clusters() < g.cluster.len()
}

/// The problems of samples whose rows name different clusters: one per row of such a
/// sample, naming the other rows.
pub fn split_samples(records: &[StudyRecord], cluster_label: &str) -> Vec<CellProblem> {
    let mut by_sample: HashMap<String, Vec<usize>> = HashMap::new();
    for (i, r) in records.iter().enumerate() {
        if r.sample.is_some() {
            by_sample.entry(sample_key(i, r)).or_default().push(i);
        }
    }
    let mut problems = Vec::new();
    let mut groups: Vec<&Vec<usize>> = by_sample.values().collect();
    groups.sort_by_key(|g| g[0]);
    for members in groups {
        let first = cluster_key(members[0], &records[members[0]]);
        if members
            .iter()
            .all(|&i| cluster_key(i, &records[i]) == first)
        {
            continue;
        }
        let rows: Vec<usize> = members.iter().map(|&i| records[i].row).collect();
        for &i in members {
            let r = &records[i];
            let here = r.cluster.as_deref().unwrap_or("(empty)");
            problems.push(CellProblem::cell(
                r.row,
                cluster_label,
                format!(
                    "sample \"{}\" is in cluster \"{here}\" here, but its rows ({}) name \
                     different clusters; rows of one sample share their respondents and so \
                     their cluster — give them one cluster value",
                    r.sample.as_deref().unwrap_or_default(),
                    crate::warning::list_rows(&rows)
                ),
            ));
        }
    }
    problems
}

/// A warning for each sample whose rows give different sample sizes.
pub fn differing_sizes(records: &[StudyRecord]) -> Vec<Warning> {
    let mut by_sample: HashMap<String, Vec<usize>> = HashMap::new();
    for (i, r) in records.iter().enumerate() {
        if r.sample.is_some() {
            by_sample.entry(sample_key(i, r)).or_default().push(i);
        }
    }
    let mut groups: Vec<&Vec<usize>> = by_sample.values().collect();
    groups.sort_by_key(|g| g[0]);
    groups
        .into_iter()
        .filter(|m| {
            let first = records[m[0]].n;
            m.iter().any(|&i| records[i].n != first)
        })
        .map(|m| Warning::SampleSizesDiffer {
            sample: records[m[0]].sample.clone().unwrap_or_default(),
            rows: m.iter().map(|&i| records[i].row).collect(),
        })
        .collect()
}

/// The respondents counted once per sample (each sample at its largest n), and the
/// samples that give no n.
pub fn respondents(records: &[StudyRecord], g: &Grouping) -> (u64, usize) {
    let mut largest: Vec<Option<u64>> = vec![None; g.samples()];
    for (r, &s) in records.iter().zip(&g.sample) {
        if let Some(n) = r.n {
            largest[s] = Some(largest[s].map_or(n, |m: u64| m.max(n)));
        }
    }
    (
        largest.iter().flatten().sum(),
        largest.iter().filter(|n| n.is_none()).count(),
    )
}
