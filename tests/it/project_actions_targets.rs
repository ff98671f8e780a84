//! Thinning targets (issue 5, item 1): basal area and removal fractions in the expected
//! driver, from below, above and proportionally in Monte Carlo, and `harvest.csv`, on small
//! tree lists whose outcome is worked out by hand. Every thinning is at year 0, before any
//! growth or mortality, so the expected values follow from the diameters alone.

use crate::project_common::*;
use std::f64::consts::PI;
use stemcast::project::{run_scenario, HarvestAction, Metric, ProjectionResult, Summary};

/// d = 10, 20, 30, 40 cm at 100 stems/ha each: 400 stems/ha and
/// G = π/40000 · 100 · (100 + 400 + 900 + 1600) = 7.5π m²/ha (derived analytically).
const FOUR: &str = "tree,dbh,expansion\n1,10,100\n2,20,100\n3,30,100\n4,40,100\n";
/// d = 10, 12, …, 20 cm at 50 stems/ha each: 300 stems/ha.
const SIX: &str = "tree,dbh,expansion\n1,10,50\n2,12,50\n3,14,50\n4,16,50\n5,18,50\n6,20,50\n";

/// Basal area of `stems` stems/ha of diameter `d` cm, m²/ha.
fn ba(stems: f64, d: f64) -> f64 {
    PI / 40000.0 * stems * d * d
}

fn run(trees: &str, thin: &str, replicates: u32, expected_driver: bool) -> ProjectionResult {
    let d = Dir::new();
    d.write("s.toml", &constant_survival(0.9, 5));
    d.write("g.toml", &linear_growth(0.3, 0.0, 0.0, 5));
    d.write("trees.csv", trees);
    let text = scenario_toml(10, 5, replicates, "", "trees = \"trees.csv\"")
        + &format!("\n[[actions]]\nyear = 0\nthin = {{ {thin} }}\n");
    let options = if expected_driver {
        expected()
    } else {
        monte_carlo(2)
    };
    run_scenario(&scenario_in(&d, &text), &options).unwrap()
}

fn year0(r: &ProjectionResult, m: Metric) -> Summary {
    *r.years[0].get(m)
}

fn mean0(r: &ProjectionResult, m: Metric) -> f64 {
    year0(r, m).mean.unwrap()
}

#[test]
fn expected_thinning_to_a_basal_area_from_below_and_above() {
    // Derived analytically. From below to 15 m²/ha: d = 10 and 20 leave whole
    // (G = 7.5π − 0.25π − π = 6.25π), then w stems of d = 30 with w·ba(1, 30) = 6.25π − 15.
    let r = run(FOUR, "from = \"below\", to_basal_area_m2_ha = 15", 1, true);
    let w = (6.25 * PI - 15.0) / ba(1.0, 30.0);
    assert!(close(mean0(&r, Metric::BasalArea), 15.0, 1e-12, 0.0));
    assert!(close(mean0(&r, Metric::StemsPerHa), 200.0 - w, 1e-12, 0.0));
    assert!(close(mean0(&r, Metric::Removed), 200.0 + w, 1e-12, 0.0));
    let h = &r.harvest[0];
    assert_eq!((h.year, h.action), (0.0, HarvestAction::Thin));
    assert!(close(
        h.basal_area_m2_ha.mean.unwrap(),
        7.5 * PI - 15.0,
        1e-12,
        0.0
    ));
    assert_eq!((h.stems_per_ha.p05, h.basal_area_m2_ha.p95), (None, None));
    // From above: d = 40 alone holds 4π > 7.5π − 15, so only part of it goes:
    // w = (7.5π − 15) / ba(1, 40).
    let r = run(FOUR, "from = \"above\", to_basal_area_m2_ha = 15", 1, true);
    let w = (7.5 * PI - 15.0) / ba(1.0, 40.0);
    assert!(close(mean0(&r, Metric::BasalArea), 15.0, 1e-12, 0.0));
    assert!(close(mean0(&r, Metric::Removed), w, 1e-12, 0.0));
}

#[test]
fn expected_thinning_by_fraction() {
    // Proportional, f = 0.3: every weight × 0.7, so stems 280, G = 0.7 · 7.5π and the QMD
    // √((100 + 400 + 900 + 1600)/4) = √750 unchanged (derived analytically).
    let r = run(
        FOUR,
        "from = \"proportional\", remove_fraction = 0.3",
        1,
        true,
    );
    assert!(close(mean0(&r, Metric::StemsPerHa), 280.0, 1e-12, 0.0));
    assert!(close(
        mean0(&r, Metric::BasalArea),
        0.7 * 7.5 * PI,
        1e-12,
        0.0
    ));
    assert!(close(mean0(&r, Metric::Qmd), 750f64.sqrt(), 1e-12, 0.0));
    assert!(close(
        r.harvest[0].basal_area_m2_ha.mean.unwrap(),
        0.3 * 7.5 * PI,
        1e-12,
        0.0
    ));
    // From below, f = 0.3 of 400 stems: all 100 of d = 10 and 20 of d = 20 (derived).
    let r = run(FOUR, "from = \"below\", remove_fraction = 0.3", 1, true);
    assert!(close(mean0(&r, Metric::Removed), 120.0, 1e-12, 0.0));
    assert!(close(
        r.harvest[0].basal_area_m2_ha.mean.unwrap(),
        ba(100.0, 10.0) + ba(20.0, 20.0),
        1e-12,
        0.0
    ));
    // Proportional to a basal area: f = 1 − 15/(7.5π) of every weight, QMD unchanged.
    let r = run(
        FOUR,
        "from = \"proportional\", to_basal_area_m2_ha = 15",
        1,
        true,
    );
    assert!(close(mean0(&r, Metric::BasalArea), 15.0, 1e-12, 0.0));
    assert!(close(
        mean0(&r, Metric::StemsPerHa),
        400.0 * 15.0 / (7.5 * PI),
        1e-12,
        0.0
    ));
    assert!(close(mean0(&r, Metric::Qmd), 750f64.sqrt(), 1e-12, 0.0));
}

/// The year-0 value of `m`, the same in every replicate (asserted).
fn same_in_all(r: &ProjectionResult, m: Metric) -> f64 {
    let s = year0(r, m);
    assert_eq!(s.p05, s.p95, "{m:?} differs between replicates");
    s.mean.unwrap()
}

#[test]
fn monte_carlo_from_below_and_above_remove_whole_records() {
    // Hand-worked on SIX, target 180 stems/ha: whole records leave until stems ≤ 180, i.e.
    // three records of 50 (300 → 250 → 200 → 150). From below they are d = 10, 12, 14; from
    // above d = 20, 18, 16.
    let below = run(SIX, "from = \"below\", to_stems_per_ha = 180", 5, false);
    let above = run(SIX, "from = \"above\", to_stems_per_ha = 180", 5, false);
    for r in [&below, &above] {
        assert_eq!(same_in_all(r, Metric::StemsPerHa), 150.0);
        assert_eq!(same_in_all(r, Metric::Removed), 150.0);
    }
    let qmd = |sq: f64| (sq / 3.0).sqrt();
    assert!(close(
        same_in_all(&below, Metric::Qmd),
        qmd(256.0 + 324.0 + 400.0),
        1e-12,
        0.0
    ));
    assert!(close(
        same_in_all(&above, Metric::Qmd),
        qmd(100.0 + 144.0 + 196.0),
        1e-12,
        0.0
    ));
    // A basal-area target works the same way: 0.9 m²/ha from above. G = π/40000·50·1640
    // = 6.4403 m²/ha; without d = 20, 18, 16, 14: π/40000·50·244 = 0.958 > 0.9, so d = 12 goes
    // too and d = 10 is left: G = π/40000·50·100 (derived).
    let r = run(SIX, "from = \"above\", to_basal_area_m2_ha = 0.9", 5, false);
    assert!(close(
        same_in_all(&r, Metric::BasalArea),
        ba(50.0, 10.0),
        1e-12,
        0.0
    ));
}

#[test]
fn monte_carlo_proportional_thinning_takes_every_kth_record() {
    // The rule (src/project/actions.rs): in ascending diameter order a record goes when
    // f·(stems so far) − (stems removed) reaches half its stems. f = 1/3 on six equal records:
    // records 2 and 5 (d = 12 and 18), 100 stems/ha; f = 1/2: records 1, 3, 5 (d = 10, 14, 18).
    let r = run(
        SIX,
        "from = \"proportional\", remove_fraction = 0.3333333333333333",
        3,
        false,
    );
    assert_eq!(same_in_all(&r, Metric::Removed), 100.0);
    let qmd = ((100.0 + 196.0 + 256.0 + 400.0) / 4.0f64).sqrt();
    assert!(close(same_in_all(&r, Metric::Qmd), qmd, 1e-12, 0.0));
    let r = run(
        SIX,
        "from = \"proportional\", remove_fraction = 0.5",
        3,
        false,
    );
    let qmd = ((144.0 + 256.0 + 400.0) / 3.0f64).sqrt();
    assert!(close(same_in_all(&r, Metric::Qmd), qmd, 1e-12, 0.0));
}

#[test]
fn harvest_csv_columns_and_values() {
    // Monte Carlo: the from-below case above, 150 stems/ha and π/40000·50·(100 + 144 + 196)
    // m²/ha in every replicate, so mean = p05 = p95 (type 7 of equal values). Expected driver:
    // exactly 120 stems/ha, all of d = 10 and 12 and 20 stems/ha of d = 14, percentiles
    // empty (derived analytically).
    let mc = run(SIX, "from = \"below\", to_stems_per_ha = 180", 4, false);
    let ex = run(SIX, "from = \"below\", to_stems_per_ha = 180", 1, true);
    let cases = [
        (
            &mc,
            "monte_carlo",
            "150",
            ba(50.0, 10.0) + ba(50.0, 12.0) + ba(50.0, 14.0),
        ),
        (
            &ex,
            "expected",
            "120",
            ba(50.0, 10.0) + ba(50.0, 12.0) + ba(20.0, 14.0),
        ),
    ];
    for (r, driver, stems, want_ba) in cases {
        let text = String::from_utf8(stemcast::report::harvest_csv(r)).unwrap();
        let lines: Vec<&str> = text.lines().collect();
        assert_eq!(lines[0], "scenario,driver,year,action,stems_per_ha_mean,stems_per_ha_p05,stems_per_ha_p95,basal_area_m2_ha_mean,basal_area_m2_ha_p05,basal_area_m2_ha_p95");
        assert_eq!(lines.len(), 2, "{text}");
        let cells: Vec<&str> = lines[1].split(',').collect();
        assert_eq!(&cells[..5], &["t", driver, "0", "thin", stems]);
        let g: f64 = cells[7].parse().unwrap();
        assert!(close(g, want_ba, 1e-12, 0.0), "{g} vs {want_ba}");
        if driver == "expected" {
            assert_eq!((cells[5], cells[6], cells[8], cells[9]), ("", "", "", ""));
        } else {
            assert_eq!((cells[5], cells[6]), (stems, stems));
            assert_eq!((cells[8], cells[9]), (cells[7], cells[7]));
        }
    }
}

#[test]
fn idle_thinning_gets_a_harvest_row_of_zeros_and_a_warning() {
    let r = run(SIX, "from = \"below\", to_stems_per_ha = 500", 4, false);
    let h = &r.harvest[0];
    assert_eq!(
        (h.stems_per_ha.mean, h.stems_per_ha.p95),
        (Some(0.0), Some(0.0))
    );
    assert!(
        r.warnings
            .iter()
            .any(|w| w.contains("year 0") && w.contains("4 of 4 replicates")),
        "{:?}",
        r.warnings
    );
}

#[test]
fn diameter_ties_leave_in_tree_id_order() {
    // src/project/actions.rs: ids compare as whole numbers when all are, else in byte order.
    // Three records of 10 cm at 100 stems/ha, thinned from below to 150 by the expected
    // driver: the first id loses all 100 stems, the second 50 (derived).
    for (ids, want) in [
        (["2", "10", "1"], [50.0, 100.0, 0.0]),
        (["t2", "t10", "t1"], [100.0, 50.0, 0.0]),
    ] {
        let trees = format!(
            "tree,dbh,expansion\n{},10,100\n{},10,100\n{},10,100\n",
            ids[0], ids[1], ids[2]
        );
        let r = run(&trees, "from = \"below\", to_stems_per_ha = 150", 1, true);
        for (id, w) in ids.iter().zip(want) {
            let row = r
                .trees
                .iter()
                .find(|t| t.year == 0.0 && t.tree == *id)
                .unwrap();
            assert_eq!(row.stems_per_ha, w, "tree {id}");
        }
    }
}
