//! Information-weighted means of frame deviations over consecutive batches, with the batch
//! scatter as their standard error: shared by `tests/offset_weighted_mean.rs` and
//! `examples/pose_bias.rs`.

use nalgebra::{Matrix6, Vector6};

/// Information-weighted means of consecutive batches.
pub struct BatchMeans {
    information: Matrix6<f64>,
    weighted: Vector6<f64>,
    means: Vec<Vector6<f64>>,
}

impl Default for BatchMeans {
    fn default() -> Self {
        Self {
            information: Matrix6::zeros(),
            weighted: Vector6::zeros(),
            means: Vec::new(),
        }
    }
}

impl BatchMeans {
    /// One frame's deviation with its weight.
    pub fn add(&mut self, information: &Matrix6<f64>, deviation: &Vector6<f64>) {
        self.information += information;
        self.weighted += information * deviation;
    }

    /// Ends the current batch: its weighted mean is kept.
    pub fn close(&mut self) {
        let inverse = self.information.try_inverse().expect("full-rank batch");
        self.means.push(inverse * self.weighted);
        self.information = Matrix6::zeros();
        self.weighted = Vector6::zeros();
    }

    /// The grand mean over the batches.
    pub fn mean(&self) -> Vector6<f64> {
        self.means.iter().sum::<Vector6<f64>>() / self.means.len() as f64
    }

    /// The standard deviation of one batch mean, per axis.
    pub fn batch_sd(&self) -> Vector6<f64> {
        let k = self.means.len() as f64;
        let mean = self.mean();
        let var: Vector6<f64> = self
            .means
            .iter()
            .map(|m| (m - mean).component_mul(&(m - mean)))
            .sum::<Vector6<f64>>()
            / (k - 1.0);
        var.map(f64::sqrt)
    }

    /// The standard error of the grand mean, per axis.
    pub fn standard_error(&self) -> Vector6<f64> {
        self.batch_sd() / (self.means.len() as f64).sqrt()
    }
}
