//! Which part of a sharded batch a scheduler's array task is (`docs/commands.md#batch`).

use crate::Error;

/// The part `K/N` asked for, from `--shard`, `--shard from-env` (Slurm: part
/// `SLURM_ARRAY_TASK_ID − SLURM_ARRAY_TASK_MIN + 1` of `SLURM_ARRAY_TASK_COUNT`, so arrays
/// numbered from 0 or from 1 both work) or `--shard-env VAR`.
pub fn shard_text_from(
    shard: Option<&str>,
    var: Option<&str>,
    env: &dyn Fn(&str) -> Option<String>,
) -> Result<Option<String>, Error> {
    let usage = Error::Usage;
    if let Some(var) = var {
        return match env(var) {
            Some(v) => Ok(Some(v.trim().to_string())),
            None => Err(usage(format!(
                "--shard-env {var}: the variable is not set (expected K/N)"
            ))),
        };
    }
    if shard != Some("from-env") {
        return Ok(shard.map(str::to_string));
    }
    let num = |name: &str| -> Result<u64, Error> {
        let v = env(name).ok_or_else(|| {
            usage(format!(
                "--shard from-env: {name} is not set (not inside a Slurm job array?)"
            ))
        })?;
        v.trim().parse().map_err(|_| {
            usage(format!(
                "--shard from-env: {name}={v} is not a whole number"
            ))
        })
    };
    let (id, min, count) = (
        num("SLURM_ARRAY_TASK_ID")?,
        num("SLURM_ARRAY_TASK_MIN")?,
        num("SLURM_ARRAY_TASK_COUNT")?,
    );
    if id < min || id - min >= count {
        return Err(usage(format!(
            "--shard from-env: task {id} is outside the array {min}..{min}+{count} (use a \
             contiguous array such as --array=1-{count})"
        )));
    }
    Ok(Some(format!("{}/{count}", id - min + 1)))
}

#[cfg(test)]
mod tests {
    use super::shard_text_from as shard_text;

    fn env(vars: &'static [(&'static str, &'static str)]) -> impl Fn(&str) -> Option<String> {
        move |k| {
            vars.iter()
                .find(|(n, _)| *n == k)
                .map(|(_, v)| v.to_string())
        }
    }

    #[test]
    fn slurm_arrays_from_zero_and_from_one_give_the_same_parts() {
        // --array=0-3: task 0 is part 1 of 4; --array=1-4: task 4 is part 4 of 4.
        let zero = env(&[
            ("SLURM_ARRAY_TASK_ID", "0"),
            ("SLURM_ARRAY_TASK_MIN", "0"),
            ("SLURM_ARRAY_TASK_COUNT", "4"),
        ]);
        let one = env(&[
            ("SLURM_ARRAY_TASK_ID", "4"),
            ("SLURM_ARRAY_TASK_MIN", "1"),
            ("SLURM_ARRAY_TASK_COUNT", "4"),
        ]);
        let a = shard_text(Some("from-env"), None, &zero).expect("zero-based");
        let b = shard_text(Some("from-env"), None, &one).expect("one-based");
        assert_eq!(a.as_deref(), Some("1/4"));
        assert_eq!(b.as_deref(), Some("4/4"));
        let none = env(&[]);
        assert!(shard_text(Some("from-env"), None, &none).is_err());
        let part = env(&[("PART", "2/3")]);
        assert_eq!(
            shard_text(None, Some("PART"), &part)
                .expect("var")
                .as_deref(),
            Some("2/3")
        );
    }
}
