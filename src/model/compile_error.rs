//! Why a compiled model cannot be evaluated on a stand.

/// Why a model cannot be evaluated on a stand.
#[derive(Debug, Clone, PartialEq)]
pub enum CompileError {
    /// A numeric variable that is neither DBH, a derived covariate nor a numeric attribute.
    UnknownVariable {
        /// The term.
        term: String,
        /// The variable.
        var: String,
    },
    /// A variable used the wrong way (numeric as categorical or the reverse).
    WrongKind {
        /// The term.
        term: String,
        /// The variable.
        var: String,
        /// What was expected.
        expected: &'static str,
    },
    /// A tree has a level of a categorical attribute that the model does not know.
    UnknownLevel {
        /// The attribute.
        var: String,
        /// The level.
        level: String,
        /// The model's levels.
        known: Vec<String>,
    },
}

impl std::fmt::Display for CompileError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            CompileError::UnknownVariable { term, var } => write!(f, "term `{term}` needs `{var}`, which is not dbh, a derived covariate (ba, bal, qmd, rel_dbh, stems) or an attribute of the trees"),
            CompileError::WrongKind { term, var, expected } => write!(f, "term `{term}` uses `{var}` as {expected}, but the trees' `{var}` is not"),
            CompileError::UnknownLevel { var, level, known } => write!(f, "`{var}` = \"{level}\" is not a level the model knows ({})", known.join(", ")),
        }
    }
}
