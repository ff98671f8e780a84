//! Ingrowth counted from a history: per plot and period, the trees first recorded at the
//! period's end at or above the threshold diameter, with the plot's area and its covariates at
//! the period's start (docs/histories.md, "Ingrowth"). This is the data of an ingrowth model.

use super::covariates::stand_covariates;
use super::frame::Frame;
use super::history::History;
use super::pairing::{NewTree, Occasion};
use super::status::Status;
use super::units::Units;

/// Relative tolerance within which a plot's expansion factors count as one value.
const SAME_EXPANSION_RTOL: f64 = 1e-9;

/// One period of one plot: from a measurement to the next.
#[derive(Debug, Clone, PartialEq)]
pub struct IngrowthPeriod {
    /// Plot id.
    pub plot: String,
    /// Start of the period (decimal year).
    pub t1: f64,
    /// End of the period.
    pub t2: f64,
    /// Length t2 − t1 in years.
    pub years: f64,
    /// Ingrowth trees: first recorded alive at t2 at or above the threshold diameter.
    pub count: usize,
    /// Their stems per area unit (the sum of their expansion factors; `NaN` without an
    /// expansion column).
    pub ingrowth_stems: f64,
    /// The plot's area (ha or acres) as 1/expansion when every live tree of the plot, at
    /// every measurement, has the same expansion factor; `None` otherwise (nested or
    /// variable-radius plots: use the trees' own expansion factors).
    pub area: Option<f64>,
    /// Stand basal area at t1 from every tree alive then (m²/ha or ft²/acre).
    pub ba: f64,
    /// Stems per area unit at t1.
    pub live_stems: f64,
    /// Quadratic mean diameter at t1 (`NaN` without stems).
    pub qmd: f64,
}

/// Ingrowth of a history: every plot-period (with zero counts too) and the ingrowth trees.
///
/// The trees are the history rows where each was first recorded, with every column of the
/// file (species and other attributes), in file order; `tree_period[i]` is the index into
/// `periods` of tree `i`.
#[derive(Debug, Clone)]
pub struct Ingrowth {
    /// The threshold diameter used (given, or the smallest recorded diameter).
    pub threshold_dbh: f64,
    /// Units of diameters and per-area values.
    pub units: Units,
    /// Every period of every plot, plot by plot in time order.
    pub periods: Vec<IngrowthPeriod>,
    /// The ingrowth trees' rows of the history (every column), in file order.
    pub trees: Frame,
    /// Period of each ingrowth tree (index into `periods`).
    pub tree_period: Vec<usize>,
    /// Diameter of each ingrowth tree when first recorded.
    pub tree_dbh: Vec<f64>,
    /// Expansion factor of each ingrowth tree (`NaN` without an expansion column).
    pub tree_expansion: Vec<f64>,
}

impl Ingrowth {
    /// The periods as CSV: `plot,t1,t2,years,ingrowth,ingrowth_stems,area,ba,stems,qmd`
    /// (area empty when the plot has no single expansion factor; per-area values in the
    /// history's units).
    pub fn periods_csv(&self) -> String {
        let mut out = String::from("plot,t1,t2,years,ingrowth,ingrowth_stems,area,ba,stems,qmd\n");
        let num = |v: f64| {
            if v.is_finite() {
                v.to_string()
            } else {
                String::new()
            }
        };
        for p in &self.periods {
            let plot = if p.plot.contains([',', '"', '\n']) {
                format!("\"{}\"", p.plot.replace('"', "\"\""))
            } else {
                p.plot.clone()
            };
            out.push_str(&format!(
                "{plot},{},{},{},{},{},{},{},{},{}\n",
                p.t1,
                p.t2,
                p.years,
                p.count,
                num(p.ingrowth_stems),
                p.area.map(num).unwrap_or_default(),
                num(p.ba),
                num(p.live_stems),
                num(p.qmd)
            ));
        }
        out
    }
}

/// Count ingrowth per plot-period and gather the ingrowth trees.
pub(super) fn build_ingrowth(
    h: &History,
    occasions: &[Occasion],
    occ_start: &[usize],
    occasion_of_row: &[u32],
    new_trees: &[NewTree],
    threshold: f64,
) -> Ingrowth {
    // Live trees per occasion, for the covariates at each period's start.
    let mut live: Vec<(Vec<f64>, Vec<f64>)> = vec![(Vec::new(), Vec::new()); occasions.len()];
    let mut plot_expansion: Vec<Option<f64>> = vec![None; h.plots.len()];
    let mut uniform = vec![true; h.plots.len()];
    for i in 0..h.frame.len() {
        if h.status[i] != Status::Alive {
            continue;
        }
        let (d, e) = &mut live[occasion_of_row[i] as usize];
        d.push(h.dbh[i]);
        e.push(h.expansion[i]);
        let p = h.plot[i] as usize;
        match plot_expansion[p] {
            None => plot_expansion[p] = Some(h.expansion[i]),
            Some(e0) => {
                let same = (h.expansion[i] - e0).abs() <= SAME_EXPANSION_RTOL * e0;
                if !same {
                    uniform[p] = false;
                }
            }
        }
    }
    let mut periods = Vec::new();
    for p in 0..h.plots.len() {
        for o in occ_start[p]..occ_start[p + 1].saturating_sub(1) {
            let (d, e) = &live[o];
            let c = stand_covariates(d, e, h.spec.units);
            let (t1, t2) = (occasions[o].time, occasions[o + 1].time);
            periods.push(IngrowthPeriod {
                plot: h.plots[p].clone(),
                t1,
                t2,
                years: t2 - t1,
                count: 0,
                ingrowth_stems: 0.0,
                area: plot_expansion[p]
                    .filter(|e| uniform[p] && e.is_finite())
                    .map(|e| 1.0 / e),
                ba: c.ba,
                live_stems: c.stems,
                qmd: c.qmd,
            });
        }
    }
    let mut rows: Vec<(usize, usize)> = new_trees
        .iter()
        .filter(|t| t.ingrowth)
        .map(|t| (t.row, t.period))
        .collect();
    rows.sort_unstable();
    let mut keep = vec![false; h.frame.len()];
    let (mut tree_period, mut tree_dbh, mut tree_expansion) = (Vec::new(), Vec::new(), Vec::new());
    for &(row, period) in &rows {
        keep[row] = true;
        periods[period].count += 1;
        periods[period].ingrowth_stems += h.expansion[row];
        tree_period.push(period);
        tree_dbh.push(h.dbh[row]);
        tree_expansion.push(h.expansion[row]);
    }
    let mut trees = h.frame.clone();
    trees.retain(&keep);
    Ingrowth {
        threshold_dbh: threshold,
        units: h.spec.units,
        periods,
        trees,
        tree_period,
        tree_dbh,
        tree_expansion,
    }
}
