//! Species-restricted actions (issue 12, item 3): `species = [...]` inside `thin` and
//! `remove = { species = [...] }`, on a small two-species tree list whose outcome is worked
//! out by hand. Every action is at year 0, before any growth or mortality, so the expected
//! values follow from the diameters alone.

use crate::project_common::*;
use std::f64::consts::PI;
use stemcast::project::{run_scenario, HarvestAction, Metric, ProjectionResult};

/// Three Douglas-fir (DF) and three red alder (RA) records at 100 stems/ha each: 600 stems/ha.
const MIXED: &str = "tree,dbh,expansion,species\n\
    1,10,100,DF\n2,12,100,RA\n3,20,100,DF\n4,22,100,RA\n5,30,100,DF\n6,32,100,RA\n";

/// Basal area of `stems` stems/ha of diameter `d` cm, m²/ha (π/40000 · stems · d²).
fn ba(stems: f64, d: f64) -> f64 {
    PI / 40000.0 * stems * d * d
}

fn run(action: &str, extra_models: &str, expected_driver: bool) -> ProjectionResult {
    let d = Dir::new();
    d.write("s.toml", &constant_survival(0.9, 5));
    d.write("g.toml", &linear_growth(0.3, 0.0, 0.0, 5));
    d.write("trees.csv", MIXED);
    let text = scenario_toml(10, 5, 20, "", "trees = \"trees.csv\"").replace(
        "growth = \"g.toml\"\n",
        &format!("growth = \"g.toml\"\n{extra_models}"),
    ) + &format!("\n[[actions]]\nyear = 0\n{action}\n");
    let options = if expected_driver {
        expected()
    } else {
        monte_carlo(2)
    };
    run_scenario(&scenario_in(&d, &text), &options).unwrap()
}

fn mean0(r: &ProjectionResult, m: Metric) -> f64 {
    r.years[0].get(m).mean.unwrap()
}

/// Year-0 expected stems of each tree id, in id order.
fn stems0(r: &ProjectionResult) -> Vec<(String, f64)> {
    r.trees
        .iter()
        .filter(|t| t.year == 0.0)
        .map(|t| (t.tree.clone(), t.stems_per_ha))
        .collect()
}

#[test]
fn a_thinning_restricted_to_one_species_removes_only_that_species() {
    // Monte Carlo (whole records), from below to 100 stems/ha of RA: RA holds 300 stems/ha,
    // so its two smallest records (12 and 22 cm) leave; DF keeps all 300 (derived by hand).
    let r = run(
        "thin = { from = \"below\", to_stems_per_ha = 100, species = [\"RA\"] }",
        "",
        false,
    );
    for m in [Metric::StemsPerHa, Metric::Removed] {
        let y = r.years[0].get(m);
        assert_eq!(y.p05, y.p95, "the same in every replicate");
    }
    assert!(close(mean0(&r, Metric::StemsPerHa), 400.0, 1e-12, 0.0));
    assert!(close(mean0(&r, Metric::Removed), 200.0, 1e-12, 0.0));
    let h = &r.harvest[0];
    assert_eq!((h.year, h.action), (0.0, HarvestAction::Thin));
    assert!(close(
        h.basal_area_m2_ha.mean.unwrap(),
        ba(100.0, 12.0) + ba(100.0, 22.0),
        1e-12,
        0.0
    ));
    assert!(r.settings.actions[0].contains("species RA only"));

    // Expected driver, proportional f = 0.5 of RA: RA records keep 50 stems/ha each, DF 100
    // (derived by hand). The same thinning unrestricted would halve DF too.
    let r = run(
        "thin = { from = \"proportional\", remove_fraction = 0.5, species = [\"RA\"] }",
        "",
        true,
    );
    let want = [
        ("1", 100.0),
        ("2", 50.0),
        ("3", 100.0),
        ("4", 50.0),
        ("5", 100.0),
        ("6", 50.0),
    ];
    let got = stems0(&r);
    assert_eq!(got.len(), want.len());
    for ((id, e), (wid, we)) in got.iter().zip(want) {
        assert_eq!(id, wid);
        assert!(close(*e, we, 1e-12, 0.0), "tree {id}: {e} vs {we}");
    }
    // Basal area target counts RA alone: from above to ba(100, 12) m²/ha of RA leaves exactly
    // the 12-cm RA record (the 32- and 22-cm records go whole, derived by hand).
    let r = run(
        &format!(
            "thin = {{ from = \"above\", to_basal_area_m2_ha = {:?}, species = [\"RA\"] }}",
            ba(100.0, 12.0)
        ),
        "",
        true,
    );
    let got = stems0(&r);
    assert!(close(got[3].1, 0.0, 0.0, 1e-9) && close(got[5].1, 0.0, 0.0, 1e-9));
    assert!(close(got[1].1, 100.0, 1e-9, 0.0));
    assert!(close(mean0(&r, Metric::StemsPerHa), 400.0, 1e-9, 0.0));
}

#[test]
fn remove_takes_every_tree_of_the_listed_species() {
    // Removing RA leaves the three DF records: 300 stems/ha and G = ba(100, 10) + ba(100, 20)
    // + ba(100, 30) (derived by hand), in both drivers.
    for expected_driver in [true, false] {
        let r = run(
            "remove = { species = [\"RA\"] }",
            "species_column = \"species\"\n",
            expected_driver,
        );
        assert!(close(mean0(&r, Metric::StemsPerHa), 300.0, 1e-12, 0.0));
        let g = ba(100.0, 10.0) + ba(100.0, 20.0) + ba(100.0, 30.0);
        assert!(close(mean0(&r, Metric::BasalArea), g, 1e-12, 0.0));
        let removed = ba(100.0, 12.0) + ba(100.0, 22.0) + ba(100.0, 32.0);
        assert!(close(
            r.harvest[0].basal_area_m2_ha.mean.unwrap(),
            removed,
            1e-12,
            0.0
        ));
        if expected_driver {
            // Exact weights: the RA records stay, with no stems, as after a thinning.
            let got = stems0(&r);
            for (id, e) in got {
                let want = if ["2", "4", "6"].contains(&id.as_str()) {
                    0.0
                } else {
                    100.0
                };
                assert_eq!(e, want, "tree {id}");
            }
        }
    }
}

#[test]
fn a_missing_species_column_is_named() {
    let d = Dir::new();
    d.write("s.toml", &constant_survival(0.9, 5));
    d.write("g.toml", &linear_growth(0.3, 0.0, 0.0, 5));
    d.write("trees.csv", MIXED);
    let text = scenario_toml(10, 5, 2, "", "trees = \"trees.csv\"").replace(
        "growth = \"g.toml\"\n",
        "growth = \"g.toml\"\nspecies_column = \"sp\"\n",
    ) + "\n[[actions]]\nyear = 0\nremove = { species = [\"RA\"] }\n";
    let p = d.write("sc.toml", &text);
    let e = stemcast::scenario::Scenario::read(&p)
        .unwrap_err()
        .to_string();
    assert!(e.contains("actions[0].remove.species"), "{e}");
    assert!(e.contains("no species column `sp`"), "{e}");
}
