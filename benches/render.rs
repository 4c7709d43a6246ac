//! Frame images (criterion, fixed seeds): a synthetic frame of the `demo` preset rendered
//! (1280x960, pinhole with distortion) with and without PNG encoding, and an overlay drawn and
//! encoded on such a frame. The target: a rendered frame well under a second, so
//! `simulate --render-every N` stays practical.

use std::hint::black_box;

use criterion::{criterion_group, criterion_main, Criterion};
use mountdrift::commands::overlay::{self, OverlayOptions};
use mountdrift::commands::simulate::{self, ScenarioSource, SimulateOptions};
use mountdrift::report::overlay::write_overlay_png;
use mountdrift::sim::render::{write_png, FrameRenderer};
use mountdrift::sim::{preset, Simulation};

fn frames(c: &mut Criterion) {
    let sim = Simulation::new(&preset("demo").expect("demo preset")).unwrap();
    let renderer = FrameRenderer::new(sim.camera(), sim.probe(), sim.drogue());
    // A frame in contact (t = 100 s): both objects large in the image.
    let truth = sim.frames().find(|f| f.truth.frame >= 3000).unwrap().truth;
    let mut group = c.benchmark_group("render");
    group.bench_function("frame_1280x960", |b| {
        b.iter(|| black_box(renderer.render(&truth)))
    });
    group.bench_function("frame_png_1280x960", |b| {
        b.iter(|| {
            let mut bytes = Vec::with_capacity(1 << 20);
            write_png(&mut bytes, &renderer.render(&truth)).unwrap();
            black_box(bytes.len())
        })
    });
    group.finish();
}

fn overlay_png(c: &mut Criterion) {
    let dir = tempfile::tempdir().unwrap();
    let mut options = SimulateOptions::new(ScenarioSource::Preset("demo".into()), dir.path());
    options.duration_s = Some(101.0);
    options.render_every = Some(3000);
    simulate::run(&options).unwrap();
    let outcome = overlay::run(&OverlayOptions {
        session: dir.path().join("session.yaml"),
        frame: 3000,
    })
    .unwrap();
    let mut group = c.benchmark_group("overlay");
    group.bench_function("solve_and_load_1280x960", |b| {
        b.iter(|| {
            black_box(
                overlay::run(&OverlayOptions {
                    session: dir.path().join("session.yaml"),
                    frame: 3000,
                })
                .unwrap()
                .width,
            )
        })
    });
    group.bench_function("draw_png_1280x960", |b| {
        b.iter(|| {
            let mut bytes = Vec::with_capacity(1 << 20);
            write_overlay_png(&mut bytes, &outcome).unwrap();
            black_box(bytes.len())
        })
    });
    group.finish();
}

criterion_group!(benches, frames, overlay_png);
criterion_main!(benches);
