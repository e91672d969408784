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

/// Each row's sample key and cluster key, formed once.
struct Keys {
    sample: Vec<String>,
    cluster: Vec<String>,
}

impl Keys {
    fn of(records: &[StudyRecord]) -> Keys {
        Keys {
            sample: records
                .iter()
                .enumerate()
                .map(|(i, r)| sample_key(i, r))
                .collect(),
            cluster: records
                .iter()
                .enumerate()
                .map(|(i, r)| cluster_key(i, r))
                .collect(),
        }
    }

    /// The rows of each named sample, samples in order of first appearance.
    fn named_samples(&self, records: &[StudyRecord]) -> Vec<Vec<usize>> {
        let mut slot: HashMap<&str, usize> = HashMap::new();
        let mut out: Vec<Vec<usize>> = Vec::new();
        for (i, r) in records.iter().enumerate() {
            if r.sample.is_some() {
                let next = out.len();
                let j = *slot.entry(self.sample[i].as_str()).or_insert(next);
                if j == out.len() {
                    out.push(Vec::new());
                }
                out[j].push(i);
            }
        }
        out
    }
}

/// The grouping of the records.
pub fn grouping(records: &[StudyRecord]) -> Grouping {
    let k = Keys::of(records);
    Grouping {
        cluster: number(&k.cluster),
        sample: number(&k.sample),
    }
}

/// The grouping of some of the rows of a grouping (at `indices`, in that order),
/// renumbered from 0 in order of first appearance.
pub fn restrict(g: &Grouping, indices: &[usize]) -> Grouping {
    let renumber = |ids: &[usize]| -> Vec<usize> {
        let mut map: HashMap<usize, usize> = HashMap::new();
        indices
            .iter()
            .map(|&i| {
                let next = map.len();
                *map.entry(ids[i]).or_insert(next)
            })
            .collect()
    };
    Grouping {
        cluster: renumber(&g.cluster),
        sample: renumber(&g.sample),
    }
}

/// True when two rows share a cluster (and so possibly a sample).
pub fn shares_any(g: &Grouping) -> bool {
    g.clusters() < g.cluster.len()
}

/// The checks of the sample and cluster columns: the problems of samples whose rows name
/// different clusters (one per row of such a sample, naming the other rows), and one
/// warning about the samples whose rows give different sample sizes.
pub fn check(records: &[StudyRecord], cluster_label: &str) -> (Vec<CellProblem>, Vec<Warning>) {
    let keys = Keys::of(records);
    let samples = keys.named_samples(records);
    let mut problems = Vec::new();
    for members in &samples {
        let first = &keys.cluster[members[0]];
        if members.iter().all(|&i| &keys.cluster[i] == first) {
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
    let differing: Vec<&Vec<usize>> = samples
        .iter()
        .filter(|m| {
            let first = records[m[0]].n;
            m.iter().any(|&i| records[i].n != first)
        })
        .collect();
    let warnings = match differing.first() {
        Some(m) => vec![Warning::SampleSizesDiffer {
            sample: records[m[0]].sample.clone().unwrap_or_default(),
            rows: m.iter().map(|&i| records[i].row).collect(),
            others: differing.len() - 1,
        }],
        None => Vec::new(),
    };
    (problems, warnings)
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
