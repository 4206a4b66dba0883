//! The keyword list: keyword, cluster, volume, position, difficulty, branded.
//!
//! Streams the file once and keeps one copy of each keyword (duplicates are
//! found through a hash of the normalised text, compared against the stored
//! keyword on a hit), so hundreds of thousands of rows load quickly. A blank
//! position means "not in the top 100".

use super::number::{echo, parse_bool, Convention, NumberFormat, NumberKind};
use super::table::{self, optional, required, ColumnSpec, Pass, ReadSettings};
use crate::error::{Issues, Result};
use std::collections::hash_map::DefaultHasher;
use std::collections::{BTreeMap, HashMap};
use std::hash::{Hash, Hasher};
use std::path::Path;

/// One keyword.
#[derive(Debug, Clone)]
pub struct Keyword {
    /// The query text as written.
    pub text: Box<str>,
    /// Index into [`KeywordSet::clusters`].
    pub cluster: u32,
    /// Monthly search volume.
    pub volume: f64,
    /// Current average position, 1 to 100; `None` when not ranking.
    pub position: Option<f64>,
    /// Difficulty, 0 to 100.
    pub difficulty: f64,
    /// Whether the query names the brand.
    pub branded: bool,
}

/// The keyword list.
#[derive(Debug, Clone, Default)]
pub struct KeywordSet {
    /// The file, as named.
    pub file: String,
    /// Cluster names in order of first appearance.
    pub clusters: Vec<String>,
    /// The keywords in file order.
    pub keywords: Vec<Keyword>,
}

/// Columns of the keyword list (interface.md).
pub const KEYWORD_COLUMNS: &[ColumnSpec] = &[
    ColumnSpec {
        name: "keyword",
        required: true,
        aliases: &["query"],
    },
    required("cluster"),
    ColumnSpec {
        name: "volume",
        required: true,
        aliases: &["search_volume"],
    },
    optional("position"),
    required("difficulty"),
    optional("branded"),
];

const KW: usize = 0;
const CLUSTER: usize = 1;
const VOLUME: usize = 2;
const POSITION: usize = 3;
const DIFFICULTY: usize = 4;
const BRANDED: usize = 5;

fn normalise(s: &str) -> String {
    s.split_whitespace()
        .collect::<Vec<_>>()
        .join(" ")
        .to_lowercase()
}

fn key_hash(s: &str) -> u64 {
    let mut h = DefaultHasher::new();
    normalise(s).hash(&mut h);
    h.finish()
}

struct Loader {
    set: KeywordSet,
    cluster_ids: HashMap<String, u32>,
    seen: HashMap<u64, (u32, u64)>,
    issues: Issues,
}

/// Reads the keyword list (as a plan's `keywords` file, nothing declared).
pub fn read(path: &Path, mapping: &BTreeMap<String, String>) -> Result<KeywordSet> {
    read_with(path, &ReadSettings::plan("keywords", mapping, None)).map(|r| r.0)
}

/// Reads the keyword list with `settings`; returns it and the number
/// format it was read with.
pub fn read_with(path: &Path, settings: &ReadSettings) -> Result<(KeywordSet, NumberFormat)> {
    table::twice(settings, |conv| read_once(path, settings, conv))
}

fn read_once(path: &Path, settings: &ReadSettings, conv: Convention) -> Result<Pass<KeywordSet>> {
    let mut t = table::open_with(path, KEYWORD_COLUMNS, settings, conv)?;
    let mut l = Loader {
        set: KeywordSet {
            file: t.file.clone(),
            ..KeywordSet::default()
        },
        cluster_ids: HashMap::new(),
        seen: HashMap::new(),
        issues: Issues::default(),
    };
    while t.next_row(&mut l.issues) {
        if let Some(k) = l.row(&t) {
            l.set.keywords.push(k);
        }
    }
    t.expect_rows(&mut l.issues, "one row per keyword");
    Ok(t.finish(l.issues, l.set))
}

impl Loader {
    fn row(&mut self, t: &table::Table) -> Option<Keyword> {
        let issues = &mut self.issues;
        let text = t.text(KW, issues).map(str::to_string);
        let cluster = t.text(CLUSTER, issues).map(str::to_string);
        let volume = t.number_in(VOLUME, 0.0, f64::INFINITY, NumberKind::Plain, issues);
        let position = read_position(t, issues);
        let difficulty = t.number_in(DIFFICULTY, 0.0, 100.0, NumberKind::Score, issues);
        let branded = read_branded(t, issues);
        let (text, cluster) = (text?, cluster?);
        if text.is_empty() {
            t.complain(KW, issues, "expected a keyword, found an empty cell");
            return None;
        }
        if cluster.is_empty() {
            t.complain(
                CLUSTER,
                issues,
                "expected a cluster name, found an empty cell",
            );
            return None;
        }
        // Only a row that is kept reaches the duplicate check, which
        // registers it under the index it is pushed at.
        let (volume, position, difficulty, branded) = (volume?, position?, difficulty?, branded?);
        let cid = self.cluster_id(&cluster);
        self.check_duplicate(t, &text, cid)?;
        Some(Keyword {
            text: text.into_boxed_str(),
            cluster: cid,
            volume,
            position,
            difficulty,
            branded,
        })
    }

    fn cluster_id(&mut self, name: &str) -> u32 {
        if let Some(&id) = self.cluster_ids.get(name) {
            return id;
        }
        let id = self.set.clusters.len() as u32;
        self.set.clusters.push(name.to_string());
        self.cluster_ids.insert(name.to_string(), id);
        id
    }

    /// Records a keyword listed twice or in two clusters. Returns None for a
    /// duplicate so it is not counted twice.
    fn check_duplicate(&mut self, t: &table::Table, text: &str, cid: u32) -> Option<()> {
        let h = key_hash(text);
        let index = self.set.keywords.len() as u32;
        match self.seen.get(&h) {
            Some(&(other, line)) => {
                let Some(prev) = self.set.keywords.get(other as usize) else {
                    return Some(());
                };
                if normalise(&prev.text) != normalise(text) {
                    return Some(()); // a hash collision of different keywords
                }
                let text = echo(text);
                let msg = if prev.cluster == cid {
                    format!("the keyword '{text}' is listed twice (also on line {line}); expected each keyword once")
                } else {
                    format!(
                        "the keyword '{text}' is in two clusters: '{}' (line {line}) and '{}'; a keyword belongs to one cluster",
                        echo(&self.set.clusters[prev.cluster as usize]), echo(&self.set.clusters[cid as usize])
                    )
                };
                t.complain(KW, &mut self.issues, msg);
                None
            }
            None => {
                self.seen.insert(h, (index, t.line()));
                Some(())
            }
        }
    }
}

fn read_position(t: &table::Table, issues: &mut Issues) -> Option<Option<f64>> {
    if !t.has(POSITION) {
        return Some(None);
    }
    let blank = t
        .text(POSITION, &mut Issues::default())
        .is_some_and(str::is_empty);
    if blank {
        return Some(None);
    }
    t.number_in(POSITION, 1.0, 100.0, NumberKind::Plain, issues)
        .map(Some)
}

fn read_branded(t: &table::Table, issues: &mut Issues) -> Option<bool> {
    if !t.has(BRANDED) {
        return Some(false);
    }
    let text = t.text(BRANDED, issues)?;
    match parse_bool(text) {
        Ok(b) => Some(b),
        Err(msg) => {
            t.complain(BRANDED, issues, msg);
            None
        }
    }
}

impl KeywordSet {
    /// Keywords of cluster `name`.
    pub fn of_cluster<'a>(&'a self, name: &str) -> impl Iterator<Item = &'a Keyword> + 'a {
        let id = self
            .clusters
            .iter()
            .position(|c| c == name)
            .map(|i| i as u32);
        self.keywords.iter().filter(move |k| Some(k.cluster) == id)
    }

    /// The keywords of every cluster, in file order, found in one pass (for
    /// callers that visit every cluster: [`Self::of_cluster`] per cluster
    /// would be quadratic).
    pub fn grouped(&self) -> HashMap<&str, Vec<&Keyword>> {
        let mut members: Vec<Vec<&Keyword>> = vec![Vec::new(); self.clusters.len()];
        for k in &self.keywords {
            if let Some(m) = members.get_mut(k.cluster as usize) {
                m.push(k);
            }
        }
        self.clusters
            .iter()
            .map(String::as_str)
            .zip(members)
            .collect()
    }
}
