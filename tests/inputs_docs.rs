//! The examples in docs/formats.md are valid: every YAML and CSV example is read with the
//! library, and the example session loads and streams.

use std::fs;
use std::path::Path;

use mountdrift::session::{yaml, CameraFile, ModelFile, MountFile, Policy, Session};

/// The fenced code blocks of a language, as (first line, whole text).
fn blocks(markdown: &str, language: &str) -> Vec<(String, String)> {
    let fence = format!("```{language}\n");
    markdown
        .split(&fence)
        .skip(1)
        .map(|rest| {
            let text = rest.split("```").next().unwrap().to_string();
            (text.lines().next().unwrap_or("").to_string(), text)
        })
        .collect()
}

fn formats() -> String {
    fs::read_to_string(Path::new(env!("CARGO_MANIFEST_DIR")).join("docs/formats.md")).unwrap()
}

#[test]
fn yaml_examples_are_valid() {
    let doc = formats();
    let examples = blocks(&doc, "yaml");
    let mut checked = 0;
    for (first, text) in &examples {
        let path = Path::new("formats.md");
        if first.starts_with("# camera.yaml") {
            let file: CameraFile = yaml::from_str(text, path).unwrap();
            file.to_camera().unwrap();
        } else if first.starts_with("# probe.yaml") || first.starts_with("# drogue.yaml") {
            let file: ModelFile = yaml::from_str(text, path).unwrap();
            file.to_model().unwrap();
        } else if first.starts_with("# mount.yaml") {
            let _: MountFile = yaml::from_str(text, path).unwrap();
        } else if first.starts_with("# policy.yaml") {
            Policy::from_yaml_str(text, path).unwrap();
        } else {
            continue;
        }
        checked += 1;
    }
    assert_eq!(checked, 6, "camera x2, probe, drogue, mount, policy");
}

#[test]
fn example_sessions_load_and_stream() {
    let doc = formats();
    let dir = tempfile::tempdir().unwrap();
    let named = |first: &str| {
        let yaml = blocks(&doc, "yaml");
        yaml.into_iter()
            .find(|(f, _)| f.starts_with(first))
            .unwrap()
            .1
    };
    for (name, first) in [
        ("camera.yaml", "# camera.yaml (pinhole)"),
        ("probe.yaml", "# probe.yaml"),
        ("drogue.yaml", "# drogue.yaml"),
        ("mount.yaml", "# mount.yaml"),
    ] {
        fs::write(dir.path().join(name), named(first)).unwrap();
    }
    let csv = blocks(&doc, "csv");
    fs::write(dir.path().join("detections.csv"), &csv[0].1).unwrap();
    fs::write(dir.path().join("truth.csv"), &csv[1].1).unwrap();
    fs::create_dir(dir.path().join("images")).unwrap();

    let manifests: Vec<_> = blocks(&doc, "yaml")
        .into_iter()
        .filter(|(_, text)| text.contains("detections:"))
        .collect();
    assert_eq!(manifests.len(), 2);
    let expected_frames = [2, 1];
    for ((_, text), frames) in manifests.iter().zip(expected_frames) {
        let path = dir.path().join("session.yaml");
        fs::write(&path, text).unwrap();
        let session = Session::load(&path).unwrap();
        let read: Vec<_> = session
            .detections()
            .unwrap()
            .collect::<Result<_, _>>()
            .unwrap();
        assert_eq!(read.len(), frames);
        if let Some(truth) = session.truth().unwrap() {
            assert_eq!(truth.collect::<Result<Vec<_>, _>>().unwrap().len(), 2);
        }
    }
}
