//! Heights and volumes of a tree list from a height model and a volume model, per tree and per
//! unit area (docs/height-volume.md). Species (or any grouping) are resolved to curve indices
//! once, so the per-tree loops index plain arrays.

use super::height::HeightCurve;
use super::height_file::HeightModel;
use super::volume::{volume_units_text, VolumeModel};
use super::ModelError;

/// A height model and a volume model checked against each other and bound to the levels
/// (e.g. species codes) of a tree list.
#[derive(Debug, Clone)]
pub struct TreeVolumeModels<'a> {
    /// One curve per level code; a single curve when the tree list has no levels.
    curves: Vec<&'a HeightCurve>,
    volume: &'a VolumeModel,
}

impl<'a> TreeVolumeModels<'a> {
    /// Bind `height` and `volume` to a tree list whose trees carry level codes indexing
    /// `levels` (pass no levels when the trees have none: the model's curve for all trees is
    /// used).
    ///
    /// # Errors
    /// [`ModelError::Invalid`] when the two models use different units, or a level (or, with
    /// no levels, the whole tree list) has no curve.
    pub fn new(
        height: &'a HeightModel,
        volume: &'a VolumeModel,
        levels: &[String],
    ) -> Result<Self, ModelError> {
        if height.units != volume.units {
            return Err(ModelError::Invalid(format!(
                "the height model is in {} units and the volume model in {} units ({}); use models in the same units",
                height.units,
                volume.units,
                volume_units_text(volume.units)
            )));
        }
        let curves = if levels.is_empty() {
            match &height.default {
                Some(c) => vec![c],
                None => {
                    return Err(ModelError::Invalid(format!(
                        "the height model has curves per {} only, and the trees have no {0}",
                        height.by.as_deref().unwrap_or("level")
                    )))
                }
            }
        } else {
            height.curves_for(levels)?
        };
        Ok(TreeVolumeModels { curves, volume })
    }

    /// Total height of every tree: `codes[i]` indexes the levels given to
    /// [`new`](Self::new) (`None` when none were given). `out` has one slot per tree.
    ///
    /// # Panics
    /// When a code is out of range or the lengths differ (the caller built the codes).
    pub fn heights(&self, dbh: &[f64], codes: Option<&[u32]>, out: &mut [f64]) {
        assert_eq!(dbh.len(), out.len(), "one height slot per tree");
        match codes {
            None => {
                let c = self.curves[0];
                for (h, &d) in out.iter_mut().zip(dbh) {
                    *h = c.height(d);
                }
            }
            Some(codes) => {
                for ((h, &d), &k) in out.iter_mut().zip(dbh).zip(codes) {
                    *h = self.curves[k as usize].height(d);
                }
            }
        }
    }

    /// Volume of every tree from its diameter and height.
    pub fn volumes(&self, dbh: &[f64], height: &[f64], out: &mut [f64]) {
        for ((v, &d), &h) in out.iter_mut().zip(dbh).zip(height) {
            *v = self.volume.tree_volume(d, h);
        }
    }

    /// Volume per unit area of a tree list whose heights come from the height model:
    /// Σ nᵢ v(Dᵢ, H(Dᵢ)) with nᵢ the stems per unit area of record i (per hectare in metric
    /// units, per acre in imperial).
    pub fn volume_per_area(
        &self,
        dbh: &[f64],
        codes: Option<&[u32]>,
        stems_per_area: &[f64],
    ) -> f64 {
        let mut height = vec![0.0; dbh.len()];
        self.heights(dbh, codes, &mut height);
        self.volume.volume_per_area(dbh, &height, stems_per_area)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::model::height_file::HeightModelFile;
    use crate::model::volume::VolumeModelFile;

    fn models(height_units: &str, by: bool) -> (HeightModel, VolumeModel) {
        let h = if by {
            "kind = \"height\"\nform = \"naslund\"\nby = \"species\"\n[[levels.A.coefficients]]\nterm = \"a\"\nestimate = 2.0\n[[levels.A.coefficients]]\nterm = \"b\"\nestimate = 0.2\n".to_string()
        } else {
            format!("kind = \"height\"\nform = \"naslund\"\nunits = \"{height_units}\"\n[[coefficients]]\nterm = \"a\"\nestimate = 2.0\n[[coefficients]]\nterm = \"b\"\nestimate = 0.2\n")
        };
        let v = "kind = \"volume\"\nform = \"combined\"\n[[coefficients]]\nterm = \"b0\"\nestimate = 0.0\n[[coefficients]]\nterm = \"b1\"\nestimate = 1e-4\n";
        (
            HeightModel::from_file(HeightModelFile::parse(&h, "h").unwrap(), "h").unwrap(),
            VolumeModel::from_file(VolumeModelFile::parse(v, "v").unwrap(), "v").unwrap(),
        )
    }

    #[test]
    fn models_must_share_units_and_cover_the_trees() {
        let (h, v) = models("imperial", false);
        let e = TreeVolumeModels::new(&h, &v, &[]).unwrap_err().to_string();
        assert!(e.contains("imperial") && e.contains("metric"), "{e}");
        let (h, v) = models("metric", true);
        assert!(TreeVolumeModels::new(&h, &v, &[]).is_err());
        let e = TreeVolumeModels::new(&h, &v, &["A".into(), "B".into()])
            .unwrap_err()
            .to_string();
        assert!(e.contains("species B"), "{e}");
    }

    // Derived analytically: Näslund a = 2, b = 0.2 at D = 10 gives H = 1.3 + 100/16 = 7.55 m;
    // V = 1e-4 · 100 · 7.55 = 0.0755 m³, times 40 stems/ha = 3.02 m³/ha.
    #[test]
    fn one_curve_for_a_tree_list_without_levels() {
        let (h, v) = models("metric", false);
        let m = TreeVolumeModels::new(&h, &v, &[]).unwrap();
        assert!((m.volume_per_area(&[10.0], None, &[40.0]) - 3.02).abs() < 1e-12);
    }
}
