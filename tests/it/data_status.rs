//! The status column's accepted values (`docs/data.md#tree-status`).

use stemcast::data::{Outcome, Status};

#[test]
fn status_table() {
    use Status::{Alive, Censored, Dead};
    // (cell, meaning with --outcome alive, meaning with --outcome dead); docs/data.md#tree-status.
    let table = [
        ("1", Alive, Dead),
        ("0", Dead, Alive),
        ("1.0", Alive, Dead),
        ("true", Alive, Dead),
        ("FALSE", Dead, Alive),
        (" Yes ", Alive, Dead),
        ("no", Dead, Alive),
        ("alive", Alive, Alive),
        ("DEAD", Dead, Dead),
        ("Dead ", Dead, Dead),
        ("cut", Censored, Censored),
        ("Harvested", Censored, Censored),
        ("REMOVED", Censored, Censored),
    ];
    for (cell, when_alive, when_dead) in table {
        assert_eq!(
            Status::parse(cell, Outcome::Alive),
            Ok(when_alive),
            "{cell:?}"
        );
        assert_eq!(
            Status::parse(cell, Outcome::Dead),
            Ok(when_dead),
            "{cell:?}"
        );
    }
}

#[test]
fn unknown_status_quotes_value_and_lists_accepted() {
    for cell in ["2", "maybe", "", "d", "-1"] {
        let err = Status::parse(cell, Outcome::Alive).unwrap_err();
        let message = err.to_string();
        assert!(
            message.contains(&format!("\"{}\"", cell.trim())),
            "{message}"
        );
        for accepted in [
            "1/0",
            "true/false",
            "yes/no",
            "alive/dead",
            "cut/harvested/removed",
        ] {
            assert!(message.contains(accepted), "{message}");
        }
    }
}

#[test]
fn outcome_parses_and_serialises_lowercase() {
    assert_eq!("Dead".parse::<Outcome>(), Ok(Outcome::Dead));
    assert!("gone".parse::<Outcome>().is_err());
    assert_eq!(serde_json::to_string(&Outcome::Alive).unwrap(), "\"alive\"");
}
