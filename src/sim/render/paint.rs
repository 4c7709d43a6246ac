//! Anti-aliased painting on RGB images: thick segments with round ends, discs, rings and
//! translucent rectangles, for synthetic frames and for overlays.
//!
//! Pixel centres sit at integer coordinates (DESIGN section 2: the centre of the top-left pixel is
//! (0, 0)). A pixel's coverage is `clamp(w/2 + 1/2 − d, 0, 1)` with `d` the distance from its
//! centre to the shape's centre line: a one-pixel ramp at the edge. Shapes with a non-finite
//! coordinate or size paint nothing; everything is clipped to the image.

use image::{Rgb, RgbImage};
use nalgebra::Vector2;

/// An sRGB colour.
pub type Colour = [u8; 3];

/// A point in pixels (u right, v down).
pub type Px = Vector2<f64>;

/// Mixes `colour` into pixel (x, y) with opacity `alpha` in [0, 1].
pub fn blend(img: &mut RgbImage, x: u32, y: u32, colour: Colour, alpha: f64) {
    let alpha = alpha.clamp(0.0, 1.0);
    let Rgb(old) = *img.get_pixel(x, y);
    let mix = |o: u8, c: u8| (f64::from(o) + (f64::from(c) - f64::from(o)) * alpha).round() as u8;
    img.put_pixel(
        x,
        y,
        Rgb([
            mix(old[0], colour[0]),
            mix(old[1], colour[1]),
            mix(old[2], colour[2]),
        ]),
    );
}

/// The pixel rows and columns `[x0, x1] × [y0, y1]` that a shape spanning `lo..hi` (plus `pad`)
/// can touch, clipped to the image; `None` when it misses the image or is not finite.
fn pixel_box(img: &RgbImage, lo: Px, hi: Px, pad: f64) -> Option<[u32; 4]> {
    if !(lo.iter().chain(hi.iter()).all(|c| c.is_finite()) && pad.is_finite()) {
        return None;
    }
    let (w, h) = (f64::from(img.width()), f64::from(img.height()));
    let x0 = (lo.x - pad).floor().max(0.0);
    let y0 = (lo.y - pad).floor().max(0.0);
    let x1 = (hi.x + pad).ceil().min(w - 1.0);
    let y1 = (hi.y + pad).ceil().min(h - 1.0);
    (x0 <= x1 && y0 <= y1).then_some([x0 as u32, y0 as u32, x1 as u32, y1 as u32])
}

/// Calls `paint(x, y, p)` for every pixel of the box with `p` its centre.
fn for_each_pixel(
    img: &mut RgbImage,
    bx: [u32; 4],
    mut paint: impl FnMut(&mut RgbImage, u32, u32, Px),
) {
    let [x0, y0, x1, y1] = bx;
    for y in y0..=y1 {
        for x in x0..=x1 {
            paint(img, x, y, Px::new(f64::from(x), f64::from(y)));
        }
    }
}

/// Parameter `t` in [0, 1] of the point of segment `a`–`b` nearest to `p`, and the distance.
pub fn nearest_on_segment(p: &Px, a: &Px, b: &Px) -> (f64, f64) {
    let ab = b - a;
    let len2 = ab.norm_squared();
    let t = if len2 > 0.0 {
        ((p - a).dot(&ab) / len2).clamp(0.0, 1.0)
    } else {
        0.0
    };
    (t, (p - (a + ab * t)).norm())
}

/// A segment of half-width `radius_px` with round ends (a disc when `a == b`).
pub fn capsule(img: &mut RgbImage, a: Px, b: Px, radius_px: f64, colour: Colour) {
    tapered(img, a, b, radius_px, radius_px, colour);
}

/// A segment whose half-width goes linearly from `radius_a` at `a` to `radius_b` at `b`, with
/// round ends, so chains of them draw a smooth tube seen in perspective.
pub fn tapered(img: &mut RgbImage, a: Px, b: Px, radius_a: f64, radius_b: f64, colour: Colour) {
    let lo = Px::new(a.x.min(b.x), a.y.min(b.y));
    let hi = Px::new(a.x.max(b.x), a.y.max(b.y));
    let Some(bx) = pixel_box(img, lo, hi, radius_a.max(radius_b) + 1.0) else {
        return;
    };
    for_each_pixel(img, bx, |img, x, y, p| {
        let (t, d) = nearest_on_segment(&p, &a, &b);
        let coverage = radius_a + (radius_b - radius_a) * t + 0.5 - d;
        if coverage > 0.0 {
            blend(img, x, y, colour, coverage);
        }
    });
}

/// A filled disc.
pub fn disc(img: &mut RgbImage, centre: Px, radius_px: f64, colour: Colour) {
    capsule(img, centre, centre, radius_px, colour);
}

/// A circle of radius `radius_px` stroked `2 · half_width_px` wide.
pub fn ring(img: &mut RgbImage, centre: Px, radius_px: f64, half_width_px: f64, colour: Colour) {
    let Some(bx) = pixel_box(img, centre, centre, radius_px + half_width_px + 1.0) else {
        return;
    };
    for_each_pixel(img, bx, |img, x, y, p| {
        let coverage = half_width_px + 0.5 - ((p - centre).norm() - radius_px).abs();
        if coverage > 0.0 {
            blend(img, x, y, colour, coverage);
        }
    });
}

/// Consecutive points joined by segments of half-width `radius_px`.
pub fn polyline(img: &mut RgbImage, points: &[Px], radius_px: f64, colour: Colour) {
    for pair in points.windows(2) {
        capsule(img, pair[0], pair[1], radius_px, colour);
    }
}

/// A rectangle `[x0, x1] × [y0, y1]` (pixel centres, inclusive) filled with `colour` at opacity
/// `alpha`.
pub fn rect(img: &mut RgbImage, x0: f64, y0: f64, x1: f64, y1: f64, colour: Colour, alpha: f64) {
    let Some(bx) = pixel_box(img, Px::new(x0, y0), Px::new(x1, y1), 0.0) else {
        return;
    };
    for_each_pixel(img, bx, |img, x, y, _| blend(img, x, y, colour, alpha));
}

#[cfg(test)]
mod tests {
    use super::*;

    fn blank() -> RgbImage {
        RgbImage::from_pixel(40, 30, Rgb([0, 0, 0]))
    }

    #[test]
    fn a_disc_covers_its_centre_and_not_beyond_its_radius() {
        let mut img = blank();
        disc(&mut img, Px::new(10.0, 12.0), 3.0, [255, 255, 255]);
        assert_eq!(img.get_pixel(10, 12).0, [255; 3]);
        assert_eq!(img.get_pixel(12, 12).0, [255; 3]);
        // On the edge (distance 3) the coverage is 3 + 0.5 − 3 = 0.5: half of 255, rounded.
        assert_eq!(img.get_pixel(13, 12).0, [128; 3]);
        // At distance 4 the coverage 3 + 0.5 − 4 is negative.
        assert_eq!(img.get_pixel(14, 12).0, [0; 3]);
        assert_eq!(img.get_pixel(10, 16).0, [0; 3]);
    }

    #[test]
    fn a_ring_leaves_its_centre_alone() {
        let mut img = blank();
        ring(&mut img, Px::new(20.0, 15.0), 6.0, 1.0, [200, 100, 0]);
        assert_eq!(img.get_pixel(20, 15).0, [0; 3]);
        assert_eq!(img.get_pixel(26, 15).0, [200, 100, 0]);
        assert_eq!(img.get_pixel(20, 9).0, [200, 100, 0]);
    }

    #[test]
    fn shapes_off_the_image_or_not_finite_paint_nothing() {
        let mut img = blank();
        capsule(
            &mut img,
            Px::new(-50.0, -50.0),
            Px::new(-40.0, -45.0),
            2.0,
            [9; 3],
        );
        capsule(
            &mut img,
            Px::new(f64::NAN, 3.0),
            Px::new(5.0, 5.0),
            2.0,
            [9; 3],
        );
        disc(&mut img, Px::new(5.0, 5.0), f64::INFINITY, [9; 3]);
        assert!(img.pixels().all(|p| p.0 == [0; 3]));
    }

    #[test]
    fn a_segment_paints_along_its_length_with_half_blended_edges() {
        let mut img = blank();
        capsule(
            &mut img,
            Px::new(5.0, 10.0),
            Px::new(30.0, 10.0),
            1.0,
            [255; 3],
        );
        for x in 5..=30 {
            assert_eq!(img.get_pixel(x, 10).0, [255; 3]);
        }
        // Distance 1 from the line (on the edge): coverage 0.5; distance 2: none.
        assert_eq!(img.get_pixel(15, 11).0, [128; 3]);
        assert_eq!(img.get_pixel(15, 12).0, [0; 3]);
        // Beyond the ends the round caps continue: (4, 10) is at distance 1 from (5, 10).
        assert_eq!(img.get_pixel(4, 10).0, [128; 3]);
        assert_eq!(img.get_pixel(3, 10).0, [0; 3]);
        let mut half = blank();
        capsule(
            &mut half,
            Px::new(5.0, 10.5),
            Px::new(30.0, 10.5),
            0.5,
            [200; 3],
        );
        // Pixel centres at 0.5 from the centre line: coverage 0.5 → half of 200.
        assert_eq!(half.get_pixel(15, 10).0, [100; 3]);
    }

    #[test]
    fn a_tapered_segment_widens_from_one_end_to_the_other() {
        let mut img = blank();
        tapered(
            &mut img,
            Px::new(5.0, 10.0),
            Px::new(30.0, 10.0),
            1.0,
            3.0,
            [255; 3],
        );
        // At x = 28 (t = 0.92) the half-width is 2.84: distance 2 is fully covered.
        assert_eq!(img.get_pixel(28, 12).0, [255; 3]);
        // At x = 7 (t = 0.08) the half-width is 1.16: distance 2 is not covered.
        assert_eq!(img.get_pixel(7, 12).0, [0; 3]);
    }

    #[test]
    fn translucent_rectangles_mix_colours() {
        let mut img = blank();
        rect(&mut img, 2.0, 2.0, 5.0, 4.0, [200, 100, 50], 0.5);
        assert_eq!(img.get_pixel(2, 2).0, [100, 50, 25]);
        assert_eq!(img.get_pixel(5, 4).0, [100, 50, 25]);
        assert_eq!(img.get_pixel(6, 4).0, [0; 3]);
    }
}
