//! The detections and truth CSV readers and writers through the library API: round trips,
//! streaming without reading ahead, columns in any order, CRLF and byte-order marks, and
//! session loading from text.

use std::cell::Cell;
use std::io::{Cursor, Read};
use std::path::Path;
use std::rc::Rc;

use approx::assert_relative_eq;
use mountdrift::geometry::{Mount, YawPitchRoll};
use mountdrift::model::{KeypointModel, ModelPoint};
use mountdrift::session::{
    DetectionReader, DetectionWriter, FrameDetections, Observation, Session, TruthReader, TruthRow,
    TruthWriter,
};
use nalgebra::{Vector2, Vector3};

fn model(ids: &[&str]) -> KeypointModel {
    let points = ids
        .iter()
        .enumerate()
        .map(|(i, id)| ModelPoint {
            id: id.to_string(),
            xyz_m: Vector3::new(i as f64, (i * i) as f64, 1.0),
        })
        .collect();
    KeypointModel::new(points, ids[0]).unwrap()
}

fn probe() -> KeypointModel {
    model(&["tip", "collar", "mast", "fairing_l", "fairing_r"])
}

fn drogue() -> KeypointModel {
    model(&["coupler", "r0", "r1", "r2", "r3", "r4", "r5", "r6", "r7"])
}

fn obs(point: usize, u: f64, v: f64, sigma_px: f64) -> Observation {
    Observation {
        point,
        px: Vector2::new(u, v),
        sigma_px,
    }
}

fn frames() -> Vec<FrameDetections> {
    vec![
        FrameDetections {
            frame: 7,
            time_s: 0.1,
            probe: vec![obs(0, 101.25, 99.5, 0.5), obs(3, 1e-7, 479.499, 0.75)],
            drogue: vec![obs(8, 320.123456789, 240.0, 1.0)],
        },
        FrameDetections {
            frame: 9,
            time_s: 0.2 + 1e-12,
            probe: vec![],
            drogue: vec![obs(1, -3.5, 12.0, 2.5), obs(0, 0.0, 0.0, 1.0)],
        },
    ]
}

fn read_all(text: impl Into<Vec<u8>>) -> Vec<FrameDetections> {
    let input = Cursor::new(text.into());
    let path = Path::new("mem.csv");
    DetectionReader::from_reader(input, path, &probe(), &drogue(), 1.0)
        .unwrap()
        .collect::<Result<_, _>>()
        .unwrap()
}

#[test]
fn detections_round_trip_exactly() {
    let mut writer = DetectionWriter::new(Vec::new(), &probe(), &drogue(), true).unwrap();
    for f in frames() {
        writer.write_frame(&f).unwrap();
    }
    let text = writer.finish().unwrap();
    // Shortest round-trip formatting: the values come back bit for bit.
    assert_eq!(read_all(text), frames());
}

#[test]
fn detections_without_sigma_take_the_default() {
    let mut writer = DetectionWriter::new(Vec::new(), &probe(), &drogue(), false).unwrap();
    writer.write_frame(&frames()[0]).unwrap();
    let text = String::from_utf8(writer.finish().unwrap()).unwrap();
    assert!(
        text.starts_with("frame,time_s,object,point,u,v\n"),
        "{text}"
    );
    let read = read_all(text);
    assert!(read[0].probe.iter().all(|o| o.sigma_px == 1.0));
}

#[test]
fn writer_refuses_unknown_point_and_nan() {
    let mut writer = DetectionWriter::new(Vec::new(), &probe(), &drogue(), true).unwrap();
    let mut frame = frames()[0].clone();
    frame.probe.push(obs(5, 1.0, 1.0, 1.0));
    assert!(writer.write_frame(&frame).is_err());
    let mut frame = frames()[0].clone();
    frame.drogue[0].px.x = f64::NAN;
    let e = writer.write_frame(&frame).unwrap_err();
    assert!(e.to_string().contains("u must be a finite number"), "{e}");
}

#[test]
fn columns_in_any_order_with_crlf_and_bom() {
    let text = "\u{feff}v,u,point,object,time_s,frame\r\n\
                2.5,1.5,collar,probe,0.5,3\r\n\
                4.5,3.5,r2,drogue,0.5,3\r\n";
    let read = read_all(text);
    assert_eq!(read.len(), 1);
    assert_eq!(read[0].frame, 3);
    assert_eq!(read[0].probe, vec![obs(1, 1.5, 2.5, 1.0)]);
    assert_eq!(read[0].drogue, vec![obs(3, 3.5, 4.5, 1.0)]);
}

/// Generates a detections CSV of `frames` frames on the fly and counts the bytes handed out.
struct Generated {
    next_frame: u64,
    frames: u64,
    buffer: Vec<u8>,
    position: usize,
    handed_out: Rc<Cell<u64>>,
}

impl Read for Generated {
    fn read(&mut self, out: &mut [u8]) -> std::io::Result<usize> {
        if self.position == self.buffer.len() {
            if self.next_frame == self.frames {
                return Ok(0);
            }
            let f = self.next_frame;
            self.buffer = format!(
                "{f},{t},probe,tip,1.5,2.5\n{f},{t},drogue,coupler,3.5,4.5\n",
                t = f as f64 * 0.04
            )
            .into_bytes();
            if f == 0 {
                self.buffer
                    .splice(0..0, b"frame,time_s,object,point,u,v\n".iter().copied());
            }
            self.position = 0;
            self.next_frame += 1;
        }
        let n = out.len().min(self.buffer.len() - self.position);
        out[..n].copy_from_slice(&self.buffer[self.position..self.position + n]);
        self.position += n;
        self.handed_out.set(self.handed_out.get() + n as u64);
        Ok(n)
    }
}

#[test]
fn detections_stream_without_reading_ahead() {
    // About 2.6 GB of CSV if read whole; the reader must stop after a buffer's worth.
    let handed_out = Rc::new(Cell::new(0));
    let input = Generated {
        next_frame: 0,
        frames: 50_000_000,
        buffer: Vec::new(),
        position: 0,
        handed_out: Rc::clone(&handed_out),
    };
    let path = Path::new("generated.csv");
    let mut reader = DetectionReader::from_reader(input, path, &probe(), &drogue(), 1.0).unwrap();
    let first: Vec<_> = reader.by_ref().take(3).collect::<Result<_, _>>().unwrap();
    assert_eq!(first.iter().map(|f| f.frame).collect::<Vec<_>>(), [0, 1, 2]);
    assert!(
        handed_out.get() < 1 << 20,
        "read {} bytes",
        handed_out.get()
    );
}

#[test]
fn truth_round_trip() {
    let rows = [
        TruthRow {
            frame: 4,
            time_s: 0.25,
            mount: Mount {
                position_m: Vector3::new(2.1, 0.45, -0.55),
                attitude: YawPitchRoll::new(0.08, -0.03, 0.01),
            },
            vector_m: Vector3::new(7.4, 0.15, -0.06),
        },
        TruthRow {
            frame: 5,
            time_s: 0.3,
            mount: Mount {
                position_m: Vector3::new(2.1003, 0.45, -0.551),
                attitude: YawPitchRoll::new(0.081, -0.03, 0.0),
            },
            vector_m: Vector3::new(7.2, 0.12, -0.05),
        },
    ];
    let mut writer = TruthWriter::new(Vec::new()).unwrap();
    for row in &rows {
        writer.write_row(row).unwrap();
    }
    let text = writer.finish().unwrap();
    let read: Vec<TruthRow> = TruthReader::from_reader(Cursor::new(text), Path::new("t.csv"))
        .unwrap()
        .collect::<Result<_, _>>()
        .unwrap();
    assert_eq!(read.len(), 2);
    for (a, b) in read.iter().zip(&rows) {
        assert_eq!(a.frame, b.frame);
        assert_relative_eq!(a.time_s, b.time_s);
        assert_relative_eq!(a.vector_m, b.vector_m);
        assert_relative_eq!(a.mount.position_m, b.mount.position_m);
        // Degrees in the file, radians in the type: equal to rounding.
        assert_relative_eq!(a.mount.attitude.yaw, b.mount.attitude.yaw, epsilon = 1e-15);
        assert_relative_eq!(
            a.mount.attitude.pitch,
            b.mount.attitude.pitch,
            epsilon = 1e-15
        );
        assert_relative_eq!(
            a.mount.attitude.roll,
            b.mount.attitude.roll,
            epsilon = 1e-15
        );
    }
}

#[test]
fn session_from_text_with_everything_inline() {
    let manifest = "\
camera: {model: fisheye, width: 64, height: 48, fx: 40, fy: 40, cx: 31.5, cy: 23.5,
         distortion: {k1: 0.01, k4: -0.001}}
probe:
  reference: a
  points:
    - {id: a, xyz: [1, 0, 0]}
    - {id: b, xyz: [1, 1, 0]}
    - {id: c, xyz: [1, 0, 1]}
    - {id: d, xyz: [2, 1, 1]}
drogue:
  reference: h
  points:
    - {id: h, xyz: [0, 0, 0]}
    - {id: i, xyz: [0, 1, 0]}
    - {id: j, xyz: [0, 0, 1]}
    - {id: k, xyz: [0, 1, 1]}
detections: |
  frame,time_s,object,point,u,v
  1,0.0,probe,b,10,11
  1,0.0,drogue,k,12,13
  2,0.1,drogue,j,12,13
  3,0.2,drogue,zz,12,13
";
    let session = Session::from_yaml_str(manifest, Path::new("inline.yaml")).unwrap();
    assert_eq!(session.camera.distortion.model_name(), "fisheye");
    assert!(session.mount.is_none());
    assert!(session.truth().unwrap().is_none());
    let mut reader = session.detections().unwrap();
    let first = reader.next().unwrap().unwrap();
    assert_eq!(first.probe, vec![obs(1, 10.0, 11.0, 1.0)]);
    // A frame is complete once the next frame's first row is read: frame 2 ends at the bad row
    // (manifest line 22), so it is not yielded.
    let e = reader.next().unwrap().unwrap_err();
    assert_eq!(e.path, Path::new("inline.yaml"));
    assert_eq!(e.line, Some(22));
    assert!(reader.next().is_none(), "the reader stops after an error");
}
