//! What several candidate predictor sets share in `rank`: the `--reference` options, each of
//! which concerns only the candidates that use its variable.

use super::DataOptions;
use crate::model::terms::parse_predictors;
use crate::Error;

/// The variables the terms of `predictors` use (empty when it does not parse; the fit
/// reports that).
fn variables(predictors: &str) -> Vec<String> {
    parse_predictors(predictors)
        .map(|terms| {
            terms
                .iter()
                .flat_map(|t| t.factors.iter().map(|f| f.var().to_string()))
                .collect()
        })
        .unwrap_or_default()
}

/// The data options of one candidate: `--reference` options for variables it does not use
/// are dropped (they concern other candidates).
pub fn for_candidate(data: &DataOptions, predictors: &str) -> DataOptions {
    let used = variables(predictors);
    let mut out = data.clone();
    out.references
        .retain(|var, _| used.iter().any(|u| u == var));
    out
}

/// Every `--reference` variable must be used by some candidate.
///
/// # Errors
/// [`Error::Usage`] naming the first reference no candidate uses.
pub fn check_references(data: &DataOptions, candidates: &[String]) -> Result<(), Error> {
    let used: Vec<String> = candidates.iter().flat_map(|c| variables(c)).collect();
    for (var, level) in &data.references {
        if !used.iter().any(|u| u == var) {
            return Err(Error::Usage(format!(
                "--reference {var}={level}: no candidate uses `{var}`"
            )));
        }
    }
    Ok(())
}
