//! `stemcast merge PARTS... --out FILE`: arguments around [`stemcast::report::merge_parts`].

use std::path::PathBuf;

/// Put the outputs of the shards of one batch run together.
#[derive(Debug, Clone, clap::Args)]
pub struct Args {
    /// The shard outputs (`batch --shard K/N --out PART`), each with its `PART.run.json`.
    #[arg(required = true, value_name = "PARTS")]
    pub parts: Vec<PathBuf>,
    /// The merged output.
    #[arg(long, value_name = "FILE")]
    pub out: PathBuf,
    /// The tree list the parts were run on (default: the path in their run record).
    #[arg(long, value_name = "TREES.csv")]
    pub trees: Option<PathBuf>,
}

/// Run `stemcast merge`.
///
/// # Errors
/// Missing, duplicated or foreign parts, incomplete parts (exit 2); I/O (exit 1).
pub fn run(args: &Args) -> Result<(), stemcast::Error> {
    let m = stemcast::report::merge_parts(&args.parts, args.trees.as_deref(), &args.out)?;
    outln!(
        "merged {} stands from {} parts into {}",
        m.stands,
        m.parts,
        args.out.display()
    );
    Ok(())
}
