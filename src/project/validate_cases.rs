//! The cases of `stemcast validate` (docs/validation.md): one per plot and pair of
//! measurements (consecutive, or the plot's first and last with `--span first-last`), with the
//! trees alive at the start that the projection starts from and the observed outcome.

use std::collections::HashMap;

use crate::data::{
    Attribute, AttributeValues, Fate, FrameColumn, History, Pairing, TreeList, Units,
};

/// Which pairs of measurements are validated.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum Span {
    /// Every pair of consecutive measurements.
    #[default]
    Consecutive,
    /// Each plot's first and last measurement.
    FirstLast,
}

/// One plot-interval: the trees at t1 and what was observed at t2 (metric units).
#[derive(Debug, Clone, PartialEq)]
pub struct Case {
    /// Plot id.
    pub plot: String,
    /// Start and end times (decimal years).
    pub t1: f64,
    /// End time.
    pub t2: f64,
    /// Trees alive at t1 and not cut or missing by t2 (the projection's start).
    pub trees: TreeList,
    /// Per start tree: observed alive at t2.
    pub survived: Vec<bool>,
    /// Per start tree: diameter at t2 (cm; NaN unless alive).
    pub dbh2_cm: Vec<f64>,
    /// Stems per hectare cut (or missing) during the interval, removed at the start.
    pub cut_stems_per_ha: f64,
    /// QMD of every tree alive at t1 (cut ones included), cm: the case's size class.
    pub qmd_t1_cm: f64,
    /// The attribute values at t1 of the first start tree, by name (text), for grouping.
    pub levels: Vec<(String, String)>,
}

/// One tree's path through a span: its start row, end row (if alive) and fate.
struct Path {
    anchor: usize,
    end: Option<usize>,
    fate: Fate,
    t2: f64,
}

/// Follow every start tree through the span. For consecutive spans this is the interval
/// itself; for `first-last` a tree alive at its plot's first occasion is followed through
/// the chain of its intervals to the plot's last one.
fn paths(pairing: &Pairing, span: Span) -> Vec<Path> {
    let iv = &pairing.intervals;
    match span {
        Span::Consecutive => (0..iv.len())
            .map(|i| Path {
                anchor: iv.anchor[i],
                end: iv.next[i].filter(|_| iv.fate[i] == Fate::Alive),
                fate: iv.fate[i],
                t2: iv.t2[i],
            })
            .collect(),
        Span::FirstLast => {
            let by_anchor: HashMap<usize, usize> =
                iv.anchor.iter().enumerate().map(|(i, &a)| (a, i)).collect();
            // The first occasion of each plot.
            let mut first: HashMap<u32, f64> = HashMap::new();
            for o in &pairing.occasions {
                let e = first.entry(o.plot).or_insert(o.time);
                *e = e.min(o.time);
            }
            let mut out = Vec::new();
            for i in 0..iv.len() {
                let plot = pairing.occasions[iv.occasion[i] as usize].plot;
                if first.get(&plot) != Some(&iv.t1[i]) {
                    continue;
                }
                let mut j = i;
                loop {
                    let next = iv.next[j].filter(|_| iv.fate[j] == Fate::Alive);
                    match next.and_then(|r| by_anchor.get(&r)) {
                        Some(&k) => j = k,
                        None => break,
                    }
                }
                out.push(Path {
                    anchor: iv.anchor[i],
                    end: iv.next[j].filter(|_| iv.fate[j] == Fate::Alive),
                    fate: iv.fate[j],
                    t2: iv.t2[j],
                });
            }
            out
        }
    }
}

/// The role columns of a history, which are not tree attributes.
fn is_role(h: &History, name: &str) -> bool {
    let n = &h.spec.names;
    [
        &n.stand,
        &n.tree,
        &n.status,
        &n.dbh,
        &n.expansion,
        &h.spec.time,
    ]
    .iter()
    .any(|r| r.as_str() == name)
}

/// The values of `column` at `rows`; text levels are those the rows use, in byte order.
/// `None` when a row's cell is empty.
fn subset(column: &FrameColumn, rows: &[usize]) -> Option<AttributeValues> {
    match column {
        FrameColumn::Numeric(v) => {
            let x: Vec<f64> = rows.iter().map(|&r| v[r]).collect();
            x.iter()
                .all(|v| !v.is_nan())
                .then_some(AttributeValues::Numeric(x))
        }
        FrameColumn::Text { levels, codes, .. } => {
            let picked: Vec<u32> = rows.iter().map(|&r| codes[r]).collect();
            if picked.contains(&u32::MAX) {
                return None;
            }
            let mut used: Vec<u32> = picked.clone();
            used.sort_unstable();
            used.dedup();
            let remap: HashMap<u32, u32> = used
                .iter()
                .enumerate()
                .map(|(k, &c)| (c, k as u32))
                .collect();
            Some(AttributeValues::Categorical {
                levels: used.iter().map(|&c| levels[c as usize].clone()).collect(),
                codes: picked.iter().map(|c| remap[c]).collect(),
            })
        }
    }
}

/// Build the cases of `history` (paired as `pairing`) in plot order, then t1.
///
/// # Errors
/// A message when the history has no expansion factors, or a start tree has an empty
/// attribute cell (naming the line and column).
pub fn build_cases(history: &History, pairing: &Pairing, span: Span) -> Result<Vec<Case>, String> {
    if history
        .frame
        .column(&history.spec.names.expansion)
        .is_none()
    {
        return Err(format!(
            "{}: validation needs expansion factors (column \"{}\", --expansion) to compare stems per hectare",
            history.frame.source, history.spec.names.expansion
        ));
    }
    let units = history.spec.units;
    let cm = match units {
        Units::Metric => 1.0,
        Units::Imperial => crate::data::CM_PER_INCH,
    };
    let per_ha = 1.0 / units.ha_per_area_unit();
    let mut groups: std::collections::BTreeMap<(u32, u64), Vec<Path>> = Default::default();
    for p in paths(pairing, span) {
        let plot = history.plot[p.anchor];
        let key = (plot, history.time[p.anchor].to_bits());
        groups.entry(key).or_default().push(p);
    }
    let tree_col = history.frame.column(&history.spec.names.tree);
    let attributes: Vec<(&String, &FrameColumn)> = history
        .frame
        .columns
        .iter()
        .filter(|(name, _)| !is_role(history, name))
        .collect();
    let mut cases = Vec::with_capacity(groups.len());
    for ((plot, t1_bits), mut group) in groups {
        group.sort_by_key(|p| p.anchor);
        let t1 = f64::from_bits(t1_bits);
        let t2 = group.iter().map(|p| p.t2).fold(f64::NEG_INFINITY, f64::max);
        let e = |r: usize| history.expansion[r] * per_ha;
        let d = |r: usize| history.dbh[r] * cm;
        let (mut n_all, mut ba_all) = (0.0, 0.0);
        for p in &group {
            n_all += e(p.anchor);
            ba_all += e(p.anchor) * d(p.anchor) * d(p.anchor);
        }
        let start: Vec<&Path> = group
            .iter()
            .filter(|p| !matches!(p.fate, Fate::Cut | Fate::Missing))
            .collect();
        let cut_stems_per_ha: f64 = group
            .iter()
            .filter(|p| matches!(p.fate, Fate::Cut | Fate::Missing))
            .map(|p| e(p.anchor))
            .fold(0.0, |a, b| a + b);
        let rows: Vec<usize> = start.iter().map(|p| p.anchor).collect();
        let plot_id = history.plots[plot as usize].clone();
        let mut attrs = Vec::with_capacity(attributes.len());
        let mut levels = Vec::new();
        for (name, column) in &attributes {
            let values = subset(column, &rows).ok_or_else(|| {
                let r = rows
                    .iter()
                    .copied()
                    .find(|&r| column.text(r).is_none())
                    .unwrap_or(0);
                format!(
                    "{}: line {}, column \"{name}\": empty attribute value on a live tree",
                    history.frame.source, history.frame.lines[r]
                )
            })?;
            if let Some(&r) = rows.first() {
                levels.push((
                    (*name).clone(),
                    column.text(r).unwrap_or_default().into_owned(),
                ));
            }
            attrs.push(Attribute {
                name: (*name).clone(),
                values,
            });
        }
        let trees = TreeList {
            stand: format!("{plot_id}@{t1}"),
            tree_ids: rows
                .iter()
                .map(|&r| {
                    tree_col
                        .and_then(|c| c.text(r))
                        .map_or_else(|| history.tree[r].to_string(), |t| t.into_owned())
                })
                .collect(),
            dbh_cm: rows.iter().map(|&r| d(r)).collect(),
            stems_per_ha: rows.iter().map(|&r| e(r)).collect(),
            attributes: attrs,
        };
        cases.push(Case {
            plot: plot_id,
            t1,
            t2,
            trees,
            survived: start.iter().map(|p| p.end.is_some()).collect(),
            dbh2_cm: start.iter().map(|p| p.end.map_or(f64::NAN, d)).collect(),
            cut_stems_per_ha,
            qmd_t1_cm: if n_all > 0.0 {
                (ba_all / n_all).sqrt()
            } else {
                f64::NAN
            },
            levels,
        });
    }
    Ok(cases)
}

impl Case {
    /// Observed stems/ha, basal area (m²/ha) and QMD (cm) at t2 of the start trees'
    /// survivors (ingrowth excluded).
    pub fn observed(&self) -> [f64; 3] {
        let (mut n, mut s2) = (0.0, 0.0);
        for i in 0..self.trees.len() {
            if self.survived[i] {
                let e = self.trees.stems_per_ha[i];
                n += e;
                s2 += e * self.dbh2_cm[i] * self.dbh2_cm[i];
            }
        }
        let k = std::f64::consts::PI / 40_000.0;
        [n, k * s2, if n > 0.0 { (s2 / n).sqrt() } else { f64::NAN }]
    }
}
