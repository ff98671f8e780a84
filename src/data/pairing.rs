//! Pairing a [`History`] into interval records, per the rules of docs/histories.md
//! ("Pairing"): consecutive measurements of a tree's plot give one interval; trees dead or
//! cut drop out; trees missing at a remeasurement are an error unless `--missing-as`; trees
//! first recorded at a remeasurement are new, and ingrowth when at or above the threshold.

use super::history::History;
use super::ingrowth::{build_ingrowth, Ingrowth};
use super::pairing_walk::Walk;
use super::DataError;

/// What happened to a tree by the end of an interval.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Fate {
    /// Alive at the next measurement, with a diameter.
    Alive,
    /// Recorded dead (or missing, with `--missing-as dead`).
    Dead,
    /// Cut, harvested or removed: censored in the fits.
    Cut,
    /// Missing at the next measurement with `--missing-as drop`: censored in the fits.
    Missing,
}

impl Fate {
    /// The word written in the interval table's `fate` column.
    pub fn as_str(self) -> &'static str {
        match self {
            Fate::Alive => "alive",
            Fate::Dead => "dead",
            Fate::Cut => "cut",
            Fate::Missing => "missing",
        }
    }
}

/// One measurement of one plot.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Occasion {
    /// Plot code (index into [`History::plots`]).
    pub plot: u32,
    /// Decimal year.
    pub time: f64,
}

/// The interval records, one per tree alive at a measurement that is not its plot's last,
/// in the file order of the measurement that opens them (structure of arrays).
#[derive(Debug, Clone, Default, PartialEq)]
pub struct Intervals {
    /// History row at the start (the tree alive at t₁); strictly increasing.
    pub anchor: Vec<usize>,
    /// History row at the end, if the tree has one there.
    pub next: Vec<Option<usize>>,
    /// Occasion (index into [`Pairing::occasions`]) at the start.
    pub occasion: Vec<u32>,
    /// Start and end times (decimal years).
    pub t1: Vec<f64>,
    /// End time.
    pub t2: Vec<f64>,
    /// Diameter at the end (`NaN` unless alive).
    pub dbh2: Vec<f64>,
    /// Fate at the end.
    pub fate: Vec<Fate>,
}

impl Intervals {
    /// Number of interval records.
    pub fn len(&self) -> usize {
        self.anchor.len()
    }

    /// True when there are none.
    pub fn is_empty(&self) -> bool {
        self.anchor.is_empty()
    }
}

/// A tree recorded alive after its death (or removal) was recorded.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Reappearance {
    /// History row that opens the interval whose fate it contradicts.
    pub anchor: usize,
    /// The row recording the death or removal (`None` when missing counted as dead).
    pub death: Option<usize>,
    /// The row where the tree is alive again.
    pub row: usize,
}

/// A tree first recorded at a plot's remeasurement.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct NewTree {
    /// Its first history row.
    pub row: usize,
    /// The period it entered in (index into [`Ingrowth::periods`]).
    pub period: usize,
    /// Alive and at or above the threshold diameter: ingrowth.
    pub ingrowth: bool,
}

/// Where the rows of a history went.
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq)]
pub struct PairingCounts {
    /// Data rows.
    pub rows: usize,
    /// Plots.
    pub plots: usize,
    /// Plot measurements (occasions).
    pub occasions: usize,
    /// Distinct (plot, tree) pairs.
    pub trees: usize,
    /// Interval records.
    pub intervals: usize,
    /// Intervals ending alive.
    pub alive: usize,
    /// Intervals ending dead, including `missing_dead`.
    pub dead: usize,
    /// Intervals ending cut.
    pub cut: usize,
    /// Trees missing at a remeasurement, counted dead (`--missing-as dead`).
    pub missing_dead: usize,
    /// Trees missing at a remeasurement, left out (`--missing-as drop`).
    pub missing_dropped: usize,
    /// New trees alive at or above the threshold: ingrowth.
    pub ingrowth: usize,
    /// New trees alive below the threshold.
    pub new_below_threshold: usize,
    /// New trees first recorded dead or cut.
    pub new_not_alive: usize,
    /// Dead or cut rows of trees not alive at the plot's previous measurement (repeated
    /// records of a death, or trees dead at a plot's first measurement): ignored.
    pub ignored_rows: usize,
    /// Trees alive again after a recorded death or removal.
    pub reappeared: usize,
}

/// A history paired into intervals, with the new trees and ingrowth.
#[derive(Debug, Clone)]
pub struct Pairing {
    /// Every plot measurement, plot by plot in time order.
    pub occasions: Vec<Occasion>,
    /// Occasion of each history row.
    pub occasion_of_row: Vec<u32>,
    /// The interval records.
    pub intervals: Intervals,
    /// Ingrowth per plot and period, and the ingrowth trees.
    pub ingrowth: Ingrowth,
    /// Every new tree (ingrowth or not).
    pub new_trees: Vec<NewTree>,
    /// Trees alive after a recorded death.
    pub reappearances: Vec<Reappearance>,
    /// Where the rows went.
    pub counts: PairingCounts,
}

/// How many missing trees an error message lists by name.
const LISTED_MISSING: usize = 10;

impl History {
    /// Pair the measurements into intervals (docs/histories.md, "Pairing").
    ///
    /// # Errors
    /// [`DataError::File`] when no tree is alive anywhere, or when trees alive at a
    /// measurement have no record at the plot's next one and `missing_as` is
    /// [`MissingAs::Error`](super::MissingAs::Error) (listing the first trees, with lines and times).
    ///
    /// # Examples
    /// ```
    /// use stemcast::data::{parse_history, Fate, HistorySpec};
    /// let csv = b"stand,tree,year,status,dbh,expansion\n\
    ///     A,1,2001,alive,10,50\nA,2,2001,alive,20,50\n\
    ///     A,1,2006,alive,12,50\nA,2,2006,dead,,\nA,3,2006,alive,11,50\n";
    /// let p = parse_history(csv, "h.csv", &HistorySpec::default()).unwrap().pair().unwrap();
    /// assert_eq!(p.intervals.fate, [Fate::Alive, Fate::Dead]);
    /// assert_eq!(p.ingrowth.periods[0].count, 1); // tree 3, ≥ the smallest diameter (10)
    /// ```
    pub fn pair(&self) -> Result<Pairing, DataError> {
        let n = self.frame.len();
        let (occasions, occ_start, occasion_of_row) = self.occasions();
        let threshold = match self.spec.threshold_dbh {
            Some(t) => t,
            None => self
                .dbh
                .iter()
                .copied()
                .filter(|d| d.is_finite())
                .fold(f64::INFINITY, f64::min),
        };
        if !threshold.is_finite() {
            return Err(DataError::file(
                &self.frame.source,
                "no live tree with a diameter: nothing to pair",
            ));
        }
        let mut order: Vec<usize> = (0..n).collect();
        order.sort_unstable_by(|&a, &b| {
            (self.plot[a], self.tree[a])
                .cmp(&(self.plot[b], self.tree[b]))
                .then(self.time[a].total_cmp(&self.time[b]))
        });
        let mut walk = Walk {
            history: self,
            occ: &occasion_of_row,
            occ_start: &occ_start,
            threshold,
            records: Vec::new(),
            new_trees: Vec::new(),
            reappearances: Vec::new(),
            missing: Vec::new(),
            counts: PairingCounts {
                rows: n,
                plots: self.plots.len(),
                occasions: occasions.len(),
                ..PairingCounts::default()
            },
        };
        let mut start = 0;
        while start < n {
            let key = (self.plot[order[start]], self.tree[order[start]]);
            let mut end = start + 1;
            while end < n && (self.plot[order[end]], self.tree[order[end]]) == key {
                end += 1;
            }
            walk.tree(&order[start..end]);
            walk.counts.trees += 1;
            start = end;
        }
        if !walk.missing.is_empty() {
            return Err(self.missing_error(&walk.missing, &occasions));
        }
        let Walk {
            mut records,
            new_trees,
            reappearances,
            mut counts,
            ..
        } = walk;
        records.sort_unstable_by_key(|r| r.0);
        let mut intervals = Intervals::default();
        for (anchor, next, fate) in records {
            let o = occasion_of_row[anchor];
            intervals.anchor.push(anchor);
            intervals.next.push(next);
            intervals.occasion.push(o);
            intervals.t1.push(occasions[o as usize].time);
            intervals.t2.push(occasions[o as usize + 1].time);
            intervals.dbh2.push(match (fate, next) {
                (Fate::Alive, Some(r)) => self.dbh[r],
                _ => f64::NAN,
            });
            intervals.fate.push(fate);
        }
        counts.intervals = intervals.len();
        let ingrowth = build_ingrowth(
            self,
            &occasions,
            &occ_start,
            &occasion_of_row,
            &new_trees,
            threshold,
        );
        Ok(Pairing {
            occasions,
            occasion_of_row,
            intervals,
            ingrowth,
            new_trees,
            reappearances,
            counts,
        })
    }

    /// The occasions plot by plot in time order, the first occasion of each plot (plus the
    /// total at the end), and each row's occasion.
    fn occasions(&self) -> (Vec<Occasion>, Vec<usize>, Vec<u32>) {
        let mut times: Vec<Vec<f64>> = vec![Vec::new(); self.plots.len()];
        for (i, &p) in self.plot.iter().enumerate() {
            times[p as usize].push(self.time[i]);
        }
        let mut occasions = Vec::new();
        let mut occ_start = Vec::with_capacity(times.len() + 1);
        for (p, t) in times.iter_mut().enumerate() {
            t.sort_unstable_by(f64::total_cmp);
            t.dedup();
            occ_start.push(occasions.len());
            occasions.extend(t.iter().map(|&time| Occasion {
                plot: p as u32,
                time,
            }));
        }
        occ_start.push(occasions.len());
        let of_row = (0..self.plot.len())
            .map(|i| {
                let p = self.plot[i] as usize;
                let local = times[p].partition_point(|&t| t < self.time[i]);
                (occ_start[p] + local) as u32
            })
            .collect();
        (occasions, occ_start, of_row)
    }

    fn missing_error(&self, missing: &[(usize, usize)], occasions: &[Occasion]) -> DataError {
        let names = &self.spec.names;
        let listed: Vec<String> = missing
            .iter()
            .take(LISTED_MISSING)
            .map(|&(row, o)| {
                format!(
                    "plot \"{}\", tree \"{}\" (alive on line {} at {}, no record at {})",
                    self.plots[self.plot[row] as usize],
                    self.frame
                        .column(&names.tree)
                        .and_then(|c| c.text(row))
                        .unwrap_or_default(),
                    self.frame.lines[row],
                    self.time[row],
                    occasions[o].time
                )
            })
            .collect();
        let more = missing.len().saturating_sub(LISTED_MISSING);
        DataError::file(
            &self.frame.source,
            format!(
                "{} tree{} alive at a measurement {} no record at the plot's next measurement: {}{}; record such trees as dead or cut, or give --missing-as dead (count them as dead) or --missing-as drop (leave those intervals out of the fits)",
                missing.len(),
                if missing.len() == 1 { "" } else { "s" },
                if missing.len() == 1 { "has" } else { "have" },
                listed.join("; "),
                if more > 0 { format!("; and {more} more") } else { String::new() }
            ),
        )
    }
}
