//! Which of a sheet's rows belong together: the `sample` and `cluster` columns turned into
//! the grouping of the multilevel model, with the sheet's checks (a sample in two clusters
//! is an error; rows of one sample with different n are a warning) and the count of
//! respondents once per sample.

use crate::error::CellProblem;
use crate::pool::multilevel::Grouping;
use crate::sheet::StudyRecord;
use crate::warning::Warning;
use std::borrow::Cow;
use std::collections::HashMap;

/// The key rows are grouped by: their value, with case and surrounding spaces ignored
/// (borrowed when the value is already in that form, as most are).
fn key(s: &str) -> Cow<'_, str> {
    let t = s.trim();
    if t.chars().any(char::is_uppercase) {
        Cow::Owned(t.to_lowercase())
    } else {
        Cow::Borrowed(t)
    }
}

/// Which column a cluster key came from: a row's cluster is its cluster, else its sample
/// (a sample without a cluster is its own cluster), else its own row.
#[derive(PartialEq, Eq, Hash)]
enum From {
    Cluster,
    Sample,
}

/// Number the rows' groups in order of first appearance: a row whose key is `None` is a
/// group of its own.
fn number<K: std::hash::Hash + Eq>(keys: impl Iterator<Item = Option<K>>) -> Vec<usize> {
    let mut ids: HashMap<K, usize> = HashMap::new();
    let mut next = 0;
    keys.map(|k| {
        let id = match k {
            Some(k) => *ids.entry(k).or_insert(next),
            None => next,
        };
        if id == next {
            next += 1;
        }
        id
    })
    .collect()
}

/// The grouping of the records.
pub fn grouping(records: &[StudyRecord]) -> Grouping {
    Grouping {
        cluster: number(records.iter().map(|r| match (&r.cluster, &r.sample) {
            (Some(c), _) => Some((From::Cluster, key(c))),
            (None, Some(s)) => Some((From::Sample, key(s))),
            (None, None) => None,
        })),
        sample: number(records.iter().map(|r| r.sample.as_deref().map(key))),
    }
}

/// The rows of each named sample, samples in order of first appearance.
fn named_samples(records: &[StudyRecord], g: &Grouping) -> Vec<Vec<usize>> {
    // Sample numbers run from 0 in order of first appearance: each named sample's slot in
    // `out` is found by its number.
    let mut slot: Vec<Option<usize>> = vec![None; g.samples()];
    let mut out: Vec<Vec<usize>> = Vec::new();
    for (i, r) in records.iter().enumerate() {
        if r.sample.is_some() {
            let j = *slot[g.sample[i]].get_or_insert_with(|| {
                out.push(Vec::new());
                out.len() - 1
            });
            out[j].push(i);
        }
    }
    out
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
pub fn check(
    records: &[StudyRecord],
    g: &Grouping,
    cluster_label: &str,
) -> (Vec<CellProblem>, Vec<Warning>) {
    let samples = named_samples(records, g);
    let mut problems = Vec::new();
    for members in &samples {
        let first = g.cluster[members[0]];
        if members.iter().all(|&i| g.cluster[i] == first) {
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
