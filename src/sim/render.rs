//! Synthetic frame images for simulated sessions: a plain sky gradient, the probe drawn from its
//! keypoint model (a thick tube through the points on its axis, small discs at every feature) and
//! the drogue drawn as a basket (a thick rim ring through its outer points, spokes to the
//! coupling), both at their true poses and projected through the camera model with its
//! distortion. Deterministic: the same truth gives the same pixels.
//!
//! The images are for looking at (and for overlays); the detections stay the simulator's
//! keypoints with their noise. [`FrameFolder`] renders every Nth frame into a `frames` folder,
//! all or nothing.

pub mod paint;

use std::fs::File;
use std::io::{self, BufWriter};
use std::path::Path;

use image::codecs::png::PngEncoder;
use image::{ImageEncoder, Rgb, RgbImage};
use nalgebra::{Isometry3, Point3, SymmetricEigen, Vector3};
use rayon::prelude::*;

use crate::camera::Camera;
use crate::model::KeypointModel;

use super::imaging::Imager;
use super::{Simulation, TruthFrame};
use paint::{Colour, Px};

/// The folder, beside the manifest, that rendered frames go into.
pub const FRAMES_DIR: &str = "frames";

/// Sky colour at the top and at the bottom of the image.
const SKY_TOP: Colour = [74, 128, 189];
const SKY_BOTTOM: Colour = [206, 224, 240];
const PROBE_TUBE: Colour = [56, 60, 68];
const PROBE_STRUT: Colour = [84, 88, 96];
const DROGUE_RIM: Colour = [34, 36, 40];
const DROGUE_SPOKE: Colour = [92, 94, 100];
const FEATURE_EDGE: Colour = [20, 20, 24];
/// Fill of the feature discs (a keypoint of either model).
pub const FEATURE_FILL: Colour = [238, 238, 232];

/// A model point lies on the probe axis when it is within this fraction of the axis length of
/// the line from the reference point to the farthest point.
const AXIS_TOLERANCE: f64 = 0.03;
/// Tube radius, and feature disc radius, as fractions of the probe axis length.
const TUBE_RADIUS: f64 = 0.022;
const PROBE_FEATURE_RADIUS: f64 = 0.009;
/// Struts joining off-axis features to the tube, as a fraction of the tube radius.
const STRUT_RADIUS: f64 = 0.3;
/// Drogue points at least this fraction of the largest distance from the coupling form the rim.
const RIM_DISTANCE: f64 = 0.5;
/// Rim tube, spoke and feature radii as fractions of the rim radius.
const RIM_TUBE_RADIUS: f64 = 0.07;
const SPOKE_RADIUS: f64 = 0.015;
const DROGUE_FEATURE_RADIUS: f64 = 0.05;
/// Spokes of the basket, samples along each 3-D segment, around the rim.
const SPOKES: usize = 16;
const SEGMENT_SAMPLES: usize = 24;
const RIM_SAMPLES: usize = 120;
/// Drawn radii stay between these (px) so far objects stay visible and near ones sane.
const MIN_RADIUS_PX: f64 = 0.8;
const MAX_RADIUS_PX: f64 = 80.0;
/// Frames rendered at once, in parallel, before their files are written.
const RENDER_BATCH: usize = 8;

/// A 3-D polyline with the radius (m) it is drawn with.
#[derive(Debug, Clone, PartialEq)]
struct Stroke {
    points: Vec<Vector3<f64>>,
    radius_m: f64,
    colour: Colour,
}

/// What to draw of one object, in its model frame.
#[derive(Debug, Clone, PartialEq)]
struct Shape {
    strokes: Vec<Stroke>,
    features: Vec<Vector3<f64>>,
    feature_radius_m: f64,
    reference: Vector3<f64>,
}

/// Draws simulated frames of one simulation.
#[derive(Debug, Clone, PartialEq)]
pub struct FrameRenderer {
    imager: Imager,
    probe: Shape,
    drogue: Shape,
}

impl FrameRenderer {
    pub fn new(camera: &Camera, probe: &KeypointModel, drogue: &KeypointModel) -> Self {
        Self {
            imager: Imager::new(camera.clone()),
            probe: probe_shape(probe),
            drogue: drogue_shape(drogue),
        }
    }

    /// The image of one frame: sky, then the farther object, then the nearer one.
    pub fn render(&self, truth: &TruthFrame) -> RgbImage {
        let camera = self.imager.camera();
        let mut img = sky(camera.width, camera.height);
        let probe_pose = truth.camera_from_body();
        let drogue_pose = truth.camera_from_drogue();
        let depth = |shape: &Shape, pose: &Isometry3<f64>| (pose * Point3::from(shape.reference)).z;
        let mut layers = [(&self.probe, probe_pose), (&self.drogue, drogue_pose)];
        layers.sort_by(|a, b| depth(b.0, &b.1).total_cmp(&depth(a.0, &a.1)));
        for (shape, pose) in &layers {
            self.draw_shape(&mut img, shape, pose);
        }
        img
    }

    fn draw_shape(&self, img: &mut RgbImage, shape: &Shape, pose: &Isometry3<f64>) {
        for stroke in &shape.strokes {
            self.draw_stroke(img, stroke, pose);
        }
        // Far features first, so nearer ones cover them.
        let mut features: Vec<_> = shape
            .features
            .iter()
            .map(|p| ((pose * Point3::from(*p)).z, p))
            .collect();
        features.sort_by(|a, b| b.0.total_cmp(&a.0));
        for (_, feature) in features {
            if let Some((px, r)) = self.project(pose, feature, shape.feature_radius_m) {
                paint::disc(img, px, r + 1.0, FEATURE_EDGE);
                paint::disc(img, px, r, FEATURE_FILL);
            }
        }
    }

    /// Projects the stroke's points one by one, so straight edges curve with the distortion,
    /// and joins neighbours that are both visible.
    fn draw_stroke(&self, img: &mut RgbImage, stroke: &Stroke, pose: &Isometry3<f64>) {
        let projected: Vec<_> = stroke
            .points
            .iter()
            .map(|p| self.project(pose, p, stroke.radius_m))
            .collect();
        for pair in projected.windows(2) {
            if let [Some((a, ra)), Some((b, rb))] = pair {
                paint::tapered(img, *a, *b, *ra, *rb, stroke.colour);
            }
        }
    }

    /// Pixel of a model point and the pixel radius of a ball of `radius_m` around it.
    fn project(&self, pose: &Isometry3<f64>, p: &Vector3<f64>, radius_m: f64) -> Option<(Px, f64)> {
        let p_c = (pose * Point3::from(*p)).coords;
        let px = self.imager.ideal_pixel(&p_c)?;
        let camera = self.imager.camera();
        let r =
            (radius_m * 0.5 * (camera.fx + camera.fy) / p_c.z).clamp(MIN_RADIUS_PX, MAX_RADIUS_PX);
        Some((px, r))
    }
}

/// A vertical gradient from `SKY_TOP` to `SKY_BOTTOM`.
fn sky(width: u32, height: u32) -> RgbImage {
    let rows = f64::from(height.saturating_sub(1).max(1));
    let mut img = RgbImage::new(width, height);
    for (y, row) in img.rows_mut().enumerate() {
        let t = y as f64 / rows;
        let mix = |i: usize| {
            (f64::from(SKY_TOP[i]) + (f64::from(SKY_BOTTOM[i]) - f64::from(SKY_TOP[i])) * t).round()
                as u8
        };
        let colour = Rgb([mix(0), mix(1), mix(2)]);
        for pixel in row {
            *pixel = colour;
        }
    }
    img
}

/// Points evenly spaced from `a` to `b`, both included.
fn segment(a: Vector3<f64>, b: Vector3<f64>, samples: usize) -> impl Iterator<Item = Vector3<f64>> {
    (0..=samples).map(move |i| a + (b - a) * (i as f64 / samples as f64))
}

fn all_points(model: &KeypointModel) -> Vec<Vector3<f64>> {
    model.points().iter().map(|p| p.xyz_m).collect()
}

/// The probe: a tube through the points on the line from the reference point to the point
/// farthest from it, in order along that line.
fn probe_shape(model: &KeypointModel) -> Shape {
    let reference = model.reference_point();
    let points = all_points(model);
    let far = points
        .iter()
        .copied()
        .max_by(|a, b| (a - reference).norm().total_cmp(&(b - reference).norm()))
        .unwrap_or(reference);
    let length_m = (far - reference).norm();
    let mut strokes = Vec::new();
    if length_m > 0.0 {
        let axis = (far - reference) / length_m;
        let off_axis =
            |p: &Vector3<f64>| ((p - reference) - axis * (p - reference).dot(&axis)).norm();
        let mut on_axis: Vec<_> = points
            .iter()
            .filter(|p| off_axis(p) <= AXIS_TOLERANCE * length_m)
            .map(|p| ((p - reference).dot(&axis), *p))
            .collect();
        on_axis.sort_by(|a, b| a.0.total_cmp(&b.0));
        let path: Vec<_> = on_axis
            .windows(2)
            .flat_map(|w| segment(w[0].1, w[1].1, SEGMENT_SAMPLES).collect::<Vec<_>>())
            .collect();
        let (first, last) = (on_axis[0].0, on_axis[on_axis.len() - 1].0);
        let tube_radius_m = TUBE_RADIUS * length_m;
        // Off-axis features hang from the tube on struts to its nearest point (drawn first,
        // under the tube).
        for p in points.iter().filter(|p| off_axis(p) > tube_radius_m) {
            let foot = reference + axis * (p - reference).dot(&axis).clamp(first, last);
            strokes.push(Stroke {
                points: segment(foot, *p, SEGMENT_SAMPLES).collect(),
                radius_m: STRUT_RADIUS * tube_radius_m,
                colour: PROBE_STRUT,
            });
        }
        strokes.push(Stroke {
            points: path,
            radius_m: tube_radius_m,
            colour: PROBE_TUBE,
        });
    }
    Shape {
        strokes,
        features: points,
        feature_radius_m: PROBE_FEATURE_RADIUS * length_m.max(f64::EPSILON),
        reference,
    }
}

/// A circle in 3-D: centre, two orthonormal directions in its plane, radius.
struct Circle {
    centre: Vector3<f64>,
    e1: Vector3<f64>,
    e2: Vector3<f64>,
    radius_m: f64,
}

impl Circle {
    fn at(&self, angle: f64) -> Vector3<f64> {
        self.centre + (self.e1 * angle.cos() + self.e2 * angle.sin()) * self.radius_m
    }
}

/// The circle best fitting the rim points: centroid, the plane of the two largest principal
/// directions, mean distance from the centroid. `None` for fewer than 3 points.
fn rim_circle(rim: &[Vector3<f64>]) -> Option<Circle> {
    if rim.len() < 3 {
        return None;
    }
    let centre = rim.iter().sum::<Vector3<f64>>() / rim.len() as f64;
    let scatter = rim.iter().fold(nalgebra::Matrix3::zeros(), |m, p| {
        m + (p - centre) * (p - centre).transpose()
    });
    let eig = SymmetricEigen::new(scatter);
    let normal_index = eig.eigenvalues.imin();
    let normal = eig.eigenvectors.column(normal_index).into_owned();
    let in_plane = |p: &Vector3<f64>| (p - centre) - normal * (p - centre).dot(&normal);
    let radius_m = rim.iter().map(|p| in_plane(p).norm()).sum::<f64>() / rim.len() as f64;
    let e1 = in_plane(&rim[0]).try_normalize(f64::EPSILON)?;
    let e2 = normal.cross(&e1);
    (radius_m > 0.0).then_some(Circle {
        centre,
        e1,
        e2,
        radius_m,
    })
}

/// The drogue: a rim ring through its outer points, spokes from the rim to the coupling
/// (the reference point). Without a rim (fewer than 3 outer points) only spokes to the points.
fn drogue_shape(model: &KeypointModel) -> Shape {
    let hub = model.reference_point();
    let points = all_points(model);
    let reach = points.iter().map(|p| (p - hub).norm()).fold(0.0, f64::max);
    let rim: Vec<_> = points
        .iter()
        .copied()
        .filter(|p| (p - hub).norm() >= RIM_DISTANCE * reach && reach > 0.0)
        .collect();
    let circle = rim_circle(&rim);
    let size_m = circle
        .as_ref()
        .map_or(reach, |c| c.radius_m)
        .max(f64::EPSILON);
    let mut strokes = Vec::new();
    let anchors: Vec<_> = match &circle {
        Some(c) => {
            let ring = (0..=RIM_SAMPLES)
                .map(|i| c.at(std::f64::consts::TAU * i as f64 / RIM_SAMPLES as f64));
            strokes.push(Stroke {
                points: ring.collect(),
                radius_m: RIM_TUBE_RADIUS * size_m,
                colour: DROGUE_RIM,
            });
            (0..SPOKES)
                .map(|k| c.at(std::f64::consts::TAU * k as f64 / SPOKES as f64))
                .collect()
        }
        None => rim,
    };
    // Spokes go under the rim: drawn first.
    let spokes = anchors.iter().map(|a| Stroke {
        points: segment(*a, hub, SEGMENT_SAMPLES).collect(),
        radius_m: SPOKE_RADIUS * size_m,
        colour: DROGUE_SPOKE,
    });
    let strokes = spokes.chain(strokes).collect();
    Shape {
        strokes,
        features: points,
        feature_radius_m: DROGUE_FEATURE_RADIUS * size_m,
        reference: hub,
    }
}

/// The file name of a frame's image: the frame number with six digits, `000123.png`.
pub fn frame_file_name(frame: u64) -> String {
    format!("{frame:06}.png")
}

/// Encodes an RGB image as PNG.
pub fn write_png(w: impl io::Write, img: &RgbImage) -> io::Result<()> {
    PngEncoder::new(w)
        .write_image(
            img.as_raw(),
            img.width(),
            img.height(),
            image::ExtendedColorType::Rgb8,
        )
        .map_err(io::Error::other)
}

/// Renders every `every`-th frame into a temporary folder inside the session folder; `commit`
/// moves it to `frames/` (replacing an older one), dropping it without commit deletes it.
pub struct FrameFolder {
    renderer: FrameRenderer,
    every: u64,
    dir: tempfile::TempDir,
    pending: Vec<TruthFrame>,
    rendered: u64,
}

impl FrameFolder {
    /// `every` must be at least 1.
    pub fn create(sim: &Simulation, every: u64, out_dir: &Path) -> io::Result<Self> {
        let dir = tempfile::Builder::new()
            .prefix(".mountdrift-frames-")
            .tempdir_in(out_dir)?;
        Ok(Self {
            renderer: FrameRenderer::new(sim.camera(), sim.probe(), sim.drogue()),
            every: every.max(1),
            dir,
            pending: Vec::with_capacity(RENDER_BATCH),
            rendered: 0,
        })
    }

    /// Takes a frame; renders it if its number is a multiple of `every`.
    pub fn offer(&mut self, truth: &TruthFrame) -> io::Result<()> {
        if truth.frame.is_multiple_of(self.every) {
            self.pending.push(*truth);
            if self.pending.len() >= RENDER_BATCH {
                self.flush()?;
            }
        }
        Ok(())
    }

    /// Renders and writes the pending frames, in parallel.
    pub fn flush(&mut self) -> io::Result<()> {
        let dir = self.dir.path();
        let renderer = &self.renderer;
        self.pending.par_iter().try_for_each(|truth| {
            let path = dir.join(frame_file_name(truth.frame));
            let mut out = BufWriter::new(File::create(path)?);
            write_png(&mut out, &renderer.render(truth))?;
            io::Write::flush(&mut out)
        })?;
        self.rendered += self.pending.len() as u64;
        self.pending.clear();
        Ok(())
    }

    /// Writes what is pending and moves the folder to `out_dir/frames`; returns the number of
    /// frames rendered.
    pub fn commit(mut self, out_dir: &Path) -> io::Result<u64> {
        self.flush()?;
        let target = out_dir.join(FRAMES_DIR);
        let staged = self.dir.keep();
        make_readable(&staged)?;
        if target.exists() {
            // Swap the old folder out first so the new one lands whole, then delete the old.
            let old = tempfile::Builder::new()
                .prefix(".mountdrift-old-frames-")
                .tempdir_in(out_dir)?;
            let old_frames = old.path().join(FRAMES_DIR);
            std::fs::rename(&target, &old_frames)?;
            std::fs::rename(&staged, &target)?;
            drop(old);
        } else {
            std::fs::rename(&staged, &target)?;
        }
        Ok(self.rendered)
    }
}

/// Temporary folders are private; the frames folder is an ordinary readable output.
fn make_readable(dir: &Path) -> io::Result<()> {
    #[cfg(unix)]
    {
        use std::os::unix::fs::PermissionsExt;
        std::fs::set_permissions(dir, std::fs::Permissions::from_mode(0o755))?;
    }
    #[cfg(not(unix))]
    let _ = dir;
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::model::ModelPoint;

    fn model(points: &[(&str, [f64; 3])], reference: &str) -> KeypointModel {
        let points = points
            .iter()
            .map(|(id, xyz)| ModelPoint {
                id: (*id).to_string(),
                xyz_m: Vector3::from(*xyz),
            })
            .collect();
        KeypointModel::new(points, reference).unwrap()
    }

    #[test]
    fn the_probe_tube_runs_through_the_axis_points_in_order() {
        let probe = model(
            &[
                ("tip", [4.0, 0.5, -0.5]),
                ("root", [2.0, 0.5, -0.5]),
                ("mid", [3.0, 0.5, -0.5]),
                ("fairing", [2.2, 0.7, -0.65]),
            ],
            "tip",
        );
        let shape = probe_shape(&probe);
        // A strut to the fairing, then the tube.
        assert_eq!(shape.strokes.len(), 2);
        assert_eq!(shape.strokes[0].points[0], Vector3::new(2.2, 0.5, -0.5));
        let path = &shape.strokes[1].points;
        // tip → mid → root, the fairing (0.25 m off the axis) left out of the tube.
        assert_eq!(path.len(), 2 * (SEGMENT_SAMPLES + 1));
        assert_eq!(path[0], Vector3::new(4.0, 0.5, -0.5));
        assert_eq!(path[path.len() - 1], Vector3::new(2.0, 0.5, -0.5));
        assert!(path
            .windows(2)
            .all(|w| w[1].x <= w[0].x && (w[1].y - 0.5).abs() < 1e-12));
        assert!((shape.strokes[1].radius_m - TUBE_RADIUS * 2.0).abs() < 1e-12);
        assert_eq!(shape.features.len(), 4);
    }

    #[test]
    fn the_rim_circle_of_a_regular_ring_is_exact() {
        let ring: Vec<_> = (0..8)
            .map(|k| {
                let a = (22.5 + 45.0 * k as f64).to_radians();
                Vector3::new(-0.4, 0.3 * a.cos(), 0.3 * a.sin())
            })
            .collect();
        let c = rim_circle(&ring).unwrap();
        assert!((c.radius_m - 0.3).abs() < 1e-12);
        assert!((c.centre - Vector3::new(-0.4, 0.0, 0.0)).norm() < 1e-12);
        for k in 0..16 {
            let p = c.at(k as f64);
            assert!(((p - c.centre).norm() - 0.3).abs() < 1e-12);
            assert!(
                (p.x + 0.4).abs() < 1e-12,
                "the circle lies in the rim plane"
            );
        }
    }

    #[test]
    fn the_sky_runs_from_top_to_bottom_colour() {
        let img = sky(4, 11);
        assert_eq!(img.get_pixel(0, 0).0, SKY_TOP);
        assert_eq!(img.get_pixel(3, 10).0, SKY_BOTTOM);
    }
}
