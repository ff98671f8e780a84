//! The library side of `batch`: shards, the stand hash, and `Scenario::with_trees`.

use crate::project_common::Dir;
use stemcast::data::TreeList;
use stemcast::data::{TreeListSpec, TreeListStream};
use stemcast::project::{run_scenario, stand_hash, RunOptions, Shard};
use stemcast::scenario::Scenario;

#[test]
fn shards_are_one_based_parts() {
    assert!(Shard::parse("1/1").is_ok());
    assert!(Shard::parse("2/2").is_ok());
    for bad in ["0/2", "3/2", "1/0", "1", "a/b", "-1/2"] {
        let e = Shard::parse(bad).expect_err(bad);
        assert_eq!(e.exit_code(), 2, "{bad}");
    }
    // Every stand belongs to exactly one part.
    for id in ["a", "b", "stand 7", ""] {
        let parts = (1..=3)
            .filter(|&k| Shard::new(k, 3).map(|s| s.takes(id)).unwrap_or(false))
            .count();
        assert_eq!(parts, 1, "{id}");
    }
}

#[test]
fn the_default_stand_keys_as_zero() {
    // Derived from the definition (rng::stand_key): the hash is offset by that of "1", so the
    // default stand of a one-stand run keeps the key 0 it always had.
    assert_eq!(stand_hash("1"), 0);
    assert_ne!(stand_hash("A"), stand_hash("B"));
}

fn scenario(d: &Dir) -> Scenario {
    d.write("s.toml", &crate::project_common::w2_survival());
    d.write("g.toml", &crate::project_common::w2_growth());
    d.write("one.csv", "tree,dbh,expansion\n1,10,800\n2,12,800\n");
    let path = d.write(
        "x.toml",
        "name = \"x\"\nhorizon_years = 10\nstep_years = 5\nreplicates = 4\nseed = 2\n\
         [models]\nsurvival = \"s.toml\"\ngrowth = \"g.toml\"\n[cohort]\ntrees = \"one.csv\"\n",
    );
    Scenario::read(&path).expect("scenario")
}

#[test]
fn with_trees_replaces_the_trees_and_keeps_the_rest() {
    let d = Dir::new();
    let s = scenario(&d);
    let csv = "stand,tree,dbh,expansion\nP,a,8,400\nP,b,9,400\nP,c,30,400\n";
    let mut stream = TreeListStream::from_reader(csv.as_bytes(), "t.csv", &TreeListSpec::default())
        .expect("header");
    let stand = stream.next().expect("one stand").expect("valid");
    let trees = TreeList::try_from(stand).expect("convertible");
    assert_eq!(trees.stand, "P");
    let t = s.with_trees(trees).expect("bound");
    assert_eq!(t.trees.tree_ids, ["a", "b", "c"]);
    assert_eq!(t.trees.dbh_cm, [8.0, 9.0, 30.0]);
    assert_eq!((t.name.as_str(), t.replicates, t.seed), ("x", 4, 2));
    let r = run_scenario(&t, &RunOptions::default()).expect("projection");
    assert_eq!(r.stand, "P");
    assert_eq!(r.years[0].metrics[0].mean, Some(1200.0), "3 × 400 stems/ha");
}

#[test]
fn with_trees_names_the_stand_when_a_term_cannot_be_evaluated() {
    let d = Dir::new();
    scenario(&d);
    d.write(
        "s.toml",
        &format!(
            "{}[[coefficients]]\nterm = \"site\"\nestimate = 0.1\n",
            crate::project_common::w2_survival()
        ),
    );
    d.write("one.csv", "tree,dbh,expansion,site\n1,10,800,3\n");
    let s = Scenario::read(&d.path().join("x.toml")).expect("scenario with a site column");
    let csv = "stand,tree,dbh,expansion\nQ,a,8,400\n";
    let mut stream = TreeListStream::from_reader(csv.as_bytes(), "t.csv", &TreeListSpec::default())
        .expect("header");
    let trees = TreeList::try_from(stream.next().expect("stand").expect("valid")).expect("ok");
    let e = s.with_trees(trees).expect_err("no site column").to_string();
    assert!(e.contains("stand \"Q\"") && e.contains("site"), "{e}");
}
