//! Detections CSV reading speed: frames of 6 probe and 9 drogue keypoints, parsed and grouped.

use std::hint::black_box;
use std::io::Cursor;
use std::path::Path;

use criterion::{criterion_group, criterion_main, Criterion, Throughput};
use mountdrift::model::{KeypointModel, ModelPoint};
use mountdrift::session::DetectionReader;
use nalgebra::Vector3;

const FRAMES: u64 = 20_000;

fn model(prefix: &str, n: usize) -> KeypointModel {
    let points = (0..n)
        .map(|i| ModelPoint {
            id: format!("{prefix}{i}"),
            xyz_m: Vector3::new(i as f64, (i * i) as f64, 1.0),
        })
        .collect();
    KeypointModel::new(points, &format!("{prefix}0")).expect("valid model")
}

/// A CSV with sigma_px, pixel values with two decimals as a detector would write them.
fn csv_text() -> Vec<u8> {
    let mut text = String::from("frame,time_s,object,point,u,v,sigma_px\n");
    for f in 0..FRAMES {
        let t = f as f64 / 30.0;
        for (object, prefix, n) in [("probe", "p", 6), ("drogue", "d", 9)] {
            for i in 0..n {
                let u = 100.0 + 13.37 * i as f64 + 0.01 * f as f64;
                let v = 240.0 - 7.11 * i as f64;
                text += &format!("{f},{t:.4},{object},{prefix}{i},{u:.2},{v:.2},0.8\n");
            }
        }
    }
    text.into_bytes()
}

fn read_detections(c: &mut Criterion) {
    let (probe, drogue) = (model("p", 6), model("d", 9));
    let text = csv_text();
    let mut group = c.benchmark_group("detections_csv");
    group.throughput(Throughput::Bytes(text.len() as u64));
    group.sample_size(20);
    group.bench_function("read_20k_frames", |b| {
        b.iter(|| {
            let input = Cursor::new(text.clone());
            let path = Path::new("bench.csv");
            let reader = DetectionReader::from_reader(input, path, &probe, &drogue, 1.0)
                .expect("valid header");
            let mut keypoints = 0;
            for frame in reader {
                let frame = frame.expect("valid rows");
                keypoints += frame.probe.len() + frame.drogue.len();
            }
            black_box(keypoints)
        })
    });
    group.finish();
}

criterion_group!(benches, read_detections);
criterion_main!(benches);
