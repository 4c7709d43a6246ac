//! Keypoint models: the 3D points of the probe (body frame B) and drogue (frame D) with their
//! reference point. Validated at construction; later code trusts the type.

use nalgebra::Vector3;

/// Why a keypoint model was refused.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum ModelError {
    #[error("a model needs at least 4 points (got {0})")]
    TooFewPoints(usize),
    #[error("point id '{0}' appears more than once")]
    DuplicateId(String),
    #[error("reference '{0}' is not the id of a point in the model")]
    UnknownReference(String),
    #[error("point '{id}' has a non-finite coordinate")]
    NonFinite { id: String },
}

/// One named model point.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct ModelPoint {
    pub id: String,
    pub xyz_m: Vector3<f64>,
}

/// A rigid keypoint model with a reference point.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct KeypointModel {
    points: Vec<ModelPoint>,
    reference: usize,
}

impl KeypointModel {
    /// Checks: at least 4 points, unique ids, finite coordinates, reference among the ids.
    pub fn new(points: Vec<ModelPoint>, reference: &str) -> Result<Self, ModelError> {
        if points.len() < 4 {
            return Err(ModelError::TooFewPoints(points.len()));
        }
        for (i, p) in points.iter().enumerate() {
            if !p.xyz_m.iter().all(|c| c.is_finite()) {
                return Err(ModelError::NonFinite { id: p.id.clone() });
            }
            if points[..i].iter().any(|q| q.id == p.id) {
                return Err(ModelError::DuplicateId(p.id.clone()));
            }
        }
        let reference = points
            .iter()
            .position(|p| p.id == reference)
            .ok_or_else(|| ModelError::UnknownReference(reference.to_string()))?;
        Ok(Self { points, reference })
    }

    pub fn points(&self) -> &[ModelPoint] {
        &self.points
    }

    pub fn len(&self) -> usize {
        self.points.len()
    }

    pub fn is_empty(&self) -> bool {
        self.points.is_empty()
    }

    /// Index of the point with this id.
    pub fn index_of(&self, id: &str) -> Option<usize> {
        self.points.iter().position(|p| p.id == id)
    }

    /// The reference point (where the probe meets the drogue) in the model frame.
    pub fn reference_point(&self) -> Vector3<f64> {
        self.points[self.reference].xyz_m
    }

    pub fn reference_id(&self) -> &str {
        &self.points[self.reference].id
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn pts(ids: &[&str]) -> Vec<ModelPoint> {
        ids.iter()
            .enumerate()
            .map(|(i, id)| ModelPoint {
                id: id.to_string(),
                xyz_m: Vector3::new(i as f64, 0.0, 0.0),
            })
            .collect()
    }

    #[test]
    fn validates_at_construction() {
        assert!(KeypointModel::new(pts(&["a", "b", "c", "d"]), "c").is_ok());
        assert_eq!(
            KeypointModel::new(pts(&["a", "b", "c"]), "a"),
            Err(ModelError::TooFewPoints(3))
        );
        assert_eq!(
            KeypointModel::new(pts(&["a", "b", "a", "d"]), "a"),
            Err(ModelError::DuplicateId("a".into()))
        );
        assert_eq!(
            KeypointModel::new(pts(&["a", "b", "c", "d"]), "z"),
            Err(ModelError::UnknownReference("z".into()))
        );
    }
}
