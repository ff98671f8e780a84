//! `stemcast merge`: the outputs of the shards of one batch run put back together, stands in
//! the tree list's order, byte-identical to the output of one unsharded run
//! (`docs/outputs.md#merge`).

use std::collections::HashMap;
use std::path::{Path, PathBuf};

use super::batch::{read_record, record_path};
use super::batch_log::{failed_path, warnings_path};
use crate::project::{hash_file, RunRecord, Shard};
use crate::Error;

/// What a merge put together.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Merged {
    /// Stands written.
    pub stands: usize,
    /// Parts read.
    pub parts: usize,
}

/// Merge the shard outputs `parts` of one run into `out` (and `out.warnings.csv`,
/// `out.run.json`), reading the stand order from the run's tree list (`trees`, else the path in
/// the run record).
///
/// # Errors
/// [`Error::Usage`] (exit 2) for a part without a run record, parts of different runs
/// (fingerprints), a missing or duplicated shard, a part with failed stands, a tree list whose
/// hash differs from the record, a stand missing from its part or found in the wrong one;
/// [`Error::Io`] for reading and writing.
pub fn merge_parts(parts: &[PathBuf], trees: Option<&Path>, out: &Path) -> Result<Merged, Error> {
    let usage = |m: String| Error::Usage(format!("merge: {m}"));
    if parts.is_empty() {
        return Err(usage("no parts given".into()));
    }
    let mut records: Vec<(RunRecord, Shard, u64)> = Vec::with_capacity(parts.len());
    for p in parts {
        if p == out {
            return Err(usage(format!("{} is both a part and --out", p.display())));
        }
        let rec_path = record_path(p);
        if !rec_path.exists() {
            return Err(usage(format!(
                "{}: no run record {} beside it (not a batch output?)",
                p.display(),
                rec_path.display()
            )));
        }
        let r = read_record(&rec_path)?;
        let (shard, k) = match r.shard.as_deref() {
            Some(text) => {
                let s = Shard::parse(text)?;
                let k = text.split('/').next().and_then(|k| k.parse().ok());
                (s, k.unwrap_or(0))
            }
            None => (Shard::new(1, 1)?, 1),
        };
        if failed_path(p).exists() {
            return Err(usage(format!(
                "{} has failed stands (see {}); resume that part first",
                p.display(),
                failed_path(p).display()
            )));
        }
        records.push((r, shard, k));
    }
    let first = &records[0].0;
    for (p, (r, _, _)) in parts.iter().zip(&records).skip(1) {
        if r.fingerprint != first.fingerprint {
            let why = first.differences(r).join("; ");
            return Err(usage(format!(
                "{} is a part of another run than {} (fingerprint {} against {}: {why})",
                p.display(),
                parts[0].display(),
                &r.fingerprint[..12],
                &first.fingerprint[..12]
            )));
        }
    }
    let n = records[0].1.count();
    let mut by_k: Vec<Option<usize>> = vec![None; n as usize];
    for (i, (_, s, k)) in records.iter().enumerate() {
        if s.count() != n {
            return Err(usage(format!(
                "{} is shard {k} of {}, {} is of {n}",
                parts[i].display(),
                s.count(),
                parts[0].display()
            )));
        }
        let slot = &mut by_k[(*k - 1) as usize];
        if let Some(j) = slot {
            return Err(usage(format!(
                "shard {k}/{n} is given twice: {} and {}",
                parts[*j].display(),
                parts[i].display()
            )));
        }
        *slot = Some(i);
    }
    let missing: Vec<String> = (1..=n)
        .filter(|k| by_k[(*k - 1) as usize].is_none())
        .map(|k| format!("{k}/{n}"))
        .collect();
    if !missing.is_empty() {
        return Err(usage(format!(
            "missing shard{} {}",
            if missing.len() == 1 { "" } else { "s" },
            missing.join(", ")
        )));
    }
    let trees_file = trees.map(Path::to_path_buf).unwrap_or_else(|| {
        first
            .files
            .iter()
            .find(|f| f.role == "trees")
            .map(|f| PathBuf::from(&f.path))
            .unwrap_or_default()
    });
    let want = first
        .files
        .iter()
        .find(|f| f.role == "trees")
        .map(|f| f.sha256.clone());
    if Some(hash_file(&trees_file)?) != want {
        return Err(usage(format!(
            "{}: not the tree list the parts were run on (its SHA-256 differs from the run record)",
            trees_file.display()
        )));
    }
    let stand_col = first
        .options
        .iter()
        .find_map(|o| o.strip_prefix("stand="))
        .unwrap_or("stand");
    let order = stand_order(&trees_file, stand_col)?;
    let mut header: Option<Vec<u8>> = None;
    let mut rows: Vec<Groups> = Vec::with_capacity(parts.len());
    let mut warn_header: Option<Vec<u8>> = None;
    let mut warns: Vec<Groups> = Vec::with_capacity(parts.len());
    let mut per_stand: Option<(usize, String)> = None;
    for p in parts {
        let (h, r) = grouped(p)?;
        if header.as_ref().is_some_and(|x| *x != h) {
            return Err(usage(format!(
                "{}: another header than {}",
                p.display(),
                parts[0].display()
            )));
        }
        header = Some(h);
        for (stand, (_, count)) in &r {
            match &per_stand {
                Some((c, other)) if c != count => {
                    return Err(usage(format!(
                        "{}: stand \"{stand}\" has {count} rows, stand \"{other}\" {c} (an incomplete part? resume it first)",
                        p.display()
                    )))
                }
                Some(_) => {}
                None => per_stand = Some((*count, stand.clone())),
            }
        }
        rows.push(r);
        let w = warnings_path(p);
        let (h, r) = if w.exists() {
            grouped(&w)?
        } else {
            (b"stand,warning\n".to_vec(), HashMap::new())
        };
        warn_header = Some(h);
        warns.push(r);
    }
    let mut body = header.unwrap_or_default();
    let mut warn_body = warn_header.unwrap_or_default();
    for stand in &order {
        let k = (crate::project::stand_hash(stand) % n) as usize;
        let i = by_k[k].unwrap_or(0);
        let Some(r) = rows[i].get(stand) else {
            return Err(usage(format!(
                "stand \"{stand}\" of {} is not in {} (shard {}/{n}): was that part complete?",
                trees_file.display(),
                parts[i].display(),
                k + 1
            )));
        };
        body.extend_from_slice(&r.0);
        if let Some(w) = warns[i].get(stand) {
            warn_body.extend_from_slice(&w.0);
        }
    }
    let total: usize = rows.iter().map(HashMap::len).sum();
    if total != order.len() {
        return Err(usage(format!(
            "the parts hold {total} stands, the tree list {}",
            order.len()
        )));
    }
    let mut merged = first.clone();
    merged.shard = None;
    let json = serde_json::to_string_pretty(&merged)
        .map_err(|e| Error::Usage(format!("cannot encode the run record: {e}")))?;
    let dir = match out.parent() {
        Some(d) if !d.as_os_str().is_empty() => d,
        _ => Path::new("."),
    };
    let name = |p: PathBuf| {
        p.file_name()
            .map(|n| n.to_string_lossy().into_owned())
            .unwrap_or_default()
    };
    crate::atomic::write_files_atomically(
        dir,
        &[
            (name(out.to_path_buf()), body),
            (name(warnings_path(out)), warn_body),
            (name(record_path(out)), format!("{json}\n").into_bytes()),
        ],
    )?;
    Ok(Merged {
        stands: order.len(),
        parts: parts.len(),
    })
}

/// The stand ids of a tree list in order of first appearance.
fn stand_order(path: &Path, col: &str) -> Result<Vec<String>, Error> {
    let mut r = csv::Reader::from_path(path)
        .map_err(|e| Error::Usage(format!("{}: {e}", path.display())))?;
    let headers = r
        .headers()
        .map_err(|e| Error::Usage(format!("{}: {e}", path.display())))?;
    let Some(at) = headers.iter().position(|h| h == col) else {
        return Err(Error::Usage(format!(
            "{}: no column \"{col}\"",
            path.display()
        )));
    };
    let mut order: Vec<String> = Vec::new();
    for row in r.records() {
        let row = row.map_err(|e| Error::Usage(format!("{}: {e}", path.display())))?;
        let id = row.get(at).unwrap_or_default();
        if order.last().map(String::as_str) != Some(id) {
            order.push(id.to_string());
        }
    }
    Ok(order)
}

/// A CSV file's header line and each stand's rows (first column), as bytes.
type Groups = HashMap<String, (Vec<u8>, usize)>;

fn grouped(path: &Path) -> Result<(Vec<u8>, Groups), Error> {
    let bytes = std::fs::read(path).map_err(|e| Error::io(path, e))?;
    let bad = |m: String| Error::Usage(format!("merge: {}: {m}", path.display()));
    if !bytes.is_empty() && !bytes.ends_with(b"\n") {
        return Err(bad(
            "the last line is incomplete (resume that part first)".into()
        ));
    }
    let mut reader = csv::ReaderBuilder::new()
        .has_headers(false)
        .flexible(true)
        .from_reader(bytes.as_slice());
    let mut rec = csv::ByteRecord::new();
    let more = reader
        .read_byte_record(&mut rec)
        .map_err(|e| bad(e.to_string()))?;
    if !more {
        return Err(bad("empty file".into()));
    }
    let header = bytes[..reader.position().byte() as usize].to_vec();
    let mut map: Groups = HashMap::new();
    let mut last: Option<String> = None;
    loop {
        let start = reader.position().byte() as usize;
        if !reader
            .read_byte_record(&mut rec)
            .map_err(|e| bad(e.to_string()))?
        {
            break;
        }
        let end = reader.position().byte() as usize;
        let id = String::from_utf8_lossy(rec.get(0).unwrap_or_default()).into_owned();
        if last.as_ref() != Some(&id) && map.contains_key(&id) {
            return Err(bad(format!("the rows of stand \"{id}\" are not together")));
        }
        let group = map.entry(id.clone()).or_default();
        group.0.extend_from_slice(&bytes[start..end]);
        group.1 += 1;
        last = Some(id);
    }
    Ok((header, map))
}
