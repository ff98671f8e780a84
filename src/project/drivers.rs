//! The two drivers sharing the sub-step: the expected-value trajectory and Monte Carlo
//! replicates. One [`Engine`] holds everything prepared once per run.

use super::actions::{self, Removal};
use super::harvest::HarvestPlan;
use super::params::CovarianceFactor;
use super::result::{HarvestAction, TreeRow};
use super::rng::{self, Purpose};
use super::species_actions;
use super::stand::{Initial, Stand};
use super::step::{observe_ranges, sub_step, GrowthRule, Mortality, StepContext, SurvivalRule};
use super::summary::Trace;
use crate::model::predictor::attribute_tables;
use crate::scenario::{ActionKind, Scenario};

/// Width of the DBH classes of `classes.csv`, cm.
pub(crate) const CLASS_WIDTH_CM: f64 = 5.0;

/// Per-run preparation shared by all replicates.
pub(crate) struct Engine<'a> {
    pub s: &'a Scenario,
    seed: u64,
    init: Initial,
    numeric: Vec<Vec<f64>>,
    codes: Vec<Vec<u32>>,
    survival_rule: SurvivalRule,
    growth_rule: GrowthRule,
    survival_beta: Vec<f64>,
    growth_beta: Vec<f64>,
    /// Covariance factors, when parameter uncertainty is on.
    factors: Option<(CovarianceFactor, CovarianceFactor)>,
    pub sub_steps_per_step: u64,
    pub steps: usize,
    /// Rank of each record's tree id, to break diameter ties in actions.
    ranks: Vec<u32>,
    /// The removal events of `harvest.csv`.
    pub harvest: HarvestPlan,
}

impl<'a> Engine<'a> {
    pub fn new(s: &'a Scenario, seed: u64) -> Engine<'a> {
        let (numeric, codes) = attribute_tables(&s.trees);
        let factor = |c: &crate::model::stored::ModelCommon| {
            c.covariance
                .as_ref()
                .map(|v| CovarianceFactor::new(&v.matrix))
        };
        let factors = if s.uncertainty.parameters {
            factor(&s.survival.model.common).zip(factor(&s.growth.model.common))
        } else {
            None
        };
        let sub_steps_per_step = (s.step_years / s.sub_step_years).round() as u64;
        let steps = (s.horizon_years / s.step_years).round() as usize;
        Engine {
            s,
            seed,
            init: Initial::of(&s.trees),
            numeric,
            codes,
            survival_rule: SurvivalRule::of(s),
            growth_rule: GrowthRule::of(s),
            survival_beta: s.survival.model.common.predictor.coefficients(),
            growth_beta: s.growth.model.common.predictor.coefficients(),
            factors,
            sub_steps_per_step,
            steps,
            ranks: actions::tie_ranks(&s.trees),
            harvest: HarvestPlan::of(s, sub_steps_per_step * steps as u64),
        }
    }

    /// Number of ranged variables tracked per trace.
    fn n_ranged(&self) -> usize {
        self.s.survival_eval.ranged.len() + self.s.growth_eval.ranged.len()
    }

    /// Run one replicate (`Some(r)`, Monte Carlo) or the expected trajectory (`None`),
    /// appending tree rows to `trees` when given.
    pub fn run(
        &self,
        stand: &mut Stand,
        replicate: Option<u64>,
        mut trees: Option<&mut Vec<TreeRow>>,
    ) -> Trace {
        let s = self.s;
        let u = s.uncertainty;
        let stand_key = rng::stand_key(&s.trees.stand);
        let (survival_coefs, growth_coefs) = match (replicate, &self.factors) {
            (Some(r), Some((fs, fg))) => {
                let stream = rng::stream(self.seed, Purpose::Parameters, stand_key, r);
                (
                    fs.draw(&self.survival_beta, stream, 0),
                    fg.draw(&self.growth_beta, stream, 1),
                )
            }
            _ => (self.survival_beta.clone(), self.growth_beta.clone()),
        };
        let mortality = match replicate {
            Some(r) if u.process => {
                let stream = rng::stream(self.seed, Purpose::Survival, stand_key, r);
                match s.area_ha {
                    Some(a) => Mortality::Binomial(stream, a),
                    None => Mortality::Bernoulli(stream),
                }
            }
            _ => Mortality::Expected,
        };
        let residuals = replicate
            .filter(|_| u.growth_residual)
            .map(|r| rng::stream(self.seed, Purpose::GrowthResidual, stand_key, r));
        let (mut numeric, mut codes) = (self.numeric.clone(), self.codes.clone());
        stand.reset(&self.init);
        let mut trace = Trace {
            values: Vec::with_capacity(self.steps + 1),
            classes: Vec::with_capacity(self.steps + 1),
            ranges: vec![[f64::INFINITY, f64::NEG_INFINITY]; self.n_ranged()],
            idle_thinnings: vec![0; s.actions.len()],
            harvest: vec![[0.0; 2]; self.harvest.len()],
            runaway: None,
        };
        let n_surv = s.survival_eval.ranged.len();
        let track = self.n_ranged() > 0;
        let whole_records = replicate.is_some() && u.process;
        let mut cumulative = 1.0;
        // The density limit in force (the latest `density_limit` reached).
        let mut limit = None;
        let mut removed = self.apply_actions(
            0,
            stand,
            &mut numeric,
            &mut codes,
            &mut limit,
            whole_records,
            &mut trace,
        );
        self.snapshot(
            stand,
            cumulative,
            removed,
            0.0,
            &mut trace,
            trees.as_deref_mut(),
        );
        let mut k = 0;
        for step in 1..=self.steps {
            removed = [0.0; 2];
            for _ in 0..self.sub_steps_per_step {
                let ctx = StepContext {
                    survival: &s.survival_eval,
                    growth: &s.growth_eval,
                    survival_rule: self.survival_rule,
                    growth_rule: self.growth_rule,
                    survival_coefs: &survival_coefs,
                    growth_coefs: &growth_coefs,
                    numeric: &numeric,
                    codes: &codes,
                    mortality,
                    residuals,
                };
                let (sr, gr) = trace.ranges.split_at_mut(n_surv);
                let mut observe = |st: &Stand, t: &super::stand::Totals| {
                    if track {
                        observe_ranges(&s.survival_eval, st, t, &numeric, sr);
                        observe_ranges(&s.growth_eval, st, t, &numeric, gr);
                    }
                };
                let r = sub_step(stand, &ctx, k, &mut observe);
                if r.start > 0.0 {
                    cumulative *= r.survived / r.start;
                }
                k += 1;
                let r = self.apply_actions(
                    k,
                    stand,
                    &mut numeric,
                    &mut codes,
                    &mut limit,
                    whole_records,
                    &mut trace,
                );
                removed = [removed[0] + r[0], removed[1] + r[1]];
            }
            let year = step as f64 * s.step_years;
            self.snapshot(
                stand,
                cumulative,
                removed,
                year,
                &mut trace,
                trees.as_deref_mut(),
            );
            if trace.runaway.is_some() {
                break;
            }
        }
        trace
    }

    /// Apply the actions due at sub-step end `at` in file order (a `density_limit` replaces
    /// `limit`), then the density limit in force. Returns the stems removed by thinning and
    /// by the density limit; both also go to the trace's harvest slots.
    #[allow(clippy::too_many_arguments)]
    fn apply_actions(
        &self,
        at: u64,
        stand: &mut Stand,
        numeric: &mut [Vec<f64>],
        codes: &mut [Vec<u32>],
        limit: &mut Option<f64>,
        whole_records: bool,
        trace: &mut Trace,
    ) -> [f64; 2] {
        let mut thinned = Removal::default();
        for (i, a) in self
            .s
            .actions
            .iter()
            .enumerate()
            .filter(|(_, a)| a.at == at)
        {
            match &a.kind {
                ActionKind::Thin { .. } | ActionKind::Remove(_) => {
                    let r = match &a.kind {
                        ActionKind::Thin {
                            from,
                            target,
                            species: Some(sp),
                        } => species_actions::thin_only(
                            stand,
                            &sp.records,
                            *from,
                            *target,
                            &self.ranks,
                            whole_records,
                        ),
                        ActionKind::Thin { from, target, .. } => {
                            actions::thin(stand, *from, *target, &self.ranks, whole_records)
                        }
                        ActionKind::Remove(sp) => {
                            species_actions::remove(stand, &sp.records, whole_records)
                        }
                        _ => Removal::default(),
                    };
                    if r.stems == 0.0 {
                        trace.idle_thinnings[i] += 1;
                    }
                    thinned.add(r);
                }
                ActionKind::Set(values) => actions::set(values, numeric, codes),
                ActionKind::DensityLimit { max_sdi } => *limit = Some(*max_sdi),
            }
        }
        let died = match *limit {
            Some(max_sdi) => actions::density_limit(stand, max_sdi, &self.ranks, whole_records),
            None => Removal::default(),
        };
        for (action, r) in [
            (HarvestAction::Thin, thinned),
            (HarvestAction::DensityLimit, died),
        ] {
            if let Some(slot) = self.harvest.slot(at, action) {
                trace.harvest[slot] = [r.stems, r.basal_area_m2_ha];
            }
        }
        [thinned.stems, died.stems]
    }

    fn snapshot(
        &self,
        stand: &Stand,
        cumulative: f64,
        removed: [f64; 2],
        year: f64,
        trace: &mut Trace,
        trees: Option<&mut Vec<TreeRow>>,
    ) {
        let t = stand.totals();
        trace.values.push([
            t.stems,
            cumulative,
            t.ba,
            t.qmd,
            t.sdi(),
            removed[0],
            removed[1],
        ]);
        if let Some(what) = super::runaway::find(stand) {
            trace.runaway = Some((year, what));
            return;
        }
        // Truncation is the floor for positive diameters. Records are in descending DBH
        // order, so the first has the largest class and each class is one run.
        let class_of = |d: f64| (d * (1.0 / CLASS_WIDTH_CM)) as usize;
        let mut classes = vec![0.0; stand.dbh.first().map_or(0, |&d| class_of(d) + 1)];
        let (mut current, mut run) = (usize::MAX, 0.0);
        for (&d, &e) in stand.dbh.iter().zip(&stand.stems) {
            let c = class_of(d);
            if c != current {
                if current != usize::MAX {
                    classes[current] += run;
                }
                current = c;
                run = 0.0;
            }
            run += e;
        }
        if current != usize::MAX {
            classes[current] += run;
        }
        trace.classes.push(classes);
        if let Some(rows) = trees {
            let mut order: Vec<usize> = (0..stand.len()).collect();
            order.sort_by_key(|&i| stand.tree[i]);
            let list = &self.s.trees;
            rows.extend(order.into_iter().map(|i| {
                let r = stand.tree[i] as usize;
                TreeRow {
                    tree: list.tree_ids[r].clone(),
                    year,
                    dbh_cm: stand.dbh[i],
                    cumulative_survival: stand.survival_by_record[r],
                    stems_per_ha: stand.stems[i],
                }
            }));
        }
    }
}
