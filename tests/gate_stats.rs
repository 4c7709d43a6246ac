//! The maintenance gate's statistics on hand-worked numbers: the two one-sided tests, the
//! rank-aware Wald chi-square, the outcome rule, and a comparison of two survey files built by
//! hand (cameras, covariance propagation of a pure translation).

use mountdrift::commands::compare::{
    compare_sides, decide, observed_axes, AxisEquivalence, AxisResult, ChangeOutcome, Side,
    SideKind, SideSummary,
};
use mountdrift::commands::survey::GateWarningCode;
use mountdrift::session::{
    read_mount_file, yaml, CameraFile, DistortionFile, MountCi95File, MountFile, Policy,
};
use mountdrift::stats::multivariate::{observed_projector, tost, wald_on_observed};
use nalgebra::{Matrix6, Vector6};

/// z_{0.95} = 1.644854, CHECK_VALUES.md section 1 (scipy.stats.norm.ppf, [COMP]); the standard
/// normal upper tails below are from the NIST/SEMATECH e-Handbook table 1.3.6.7.1
/// (Φ(1.60) = 0.94520, Φ(3.00) = 0.99865), so the comparison holds to 5e-6.
const Z95: f64 = 1.644854;

#[test]
fn tost_not_equivalent_hand_worked() {
    // estimate 1.2, se 0.5, margin 2.0, α = 0.05:
    // interval 1.2 ± 1.644854·0.5 = 1.2 ± 0.822427 = (0.377573, 2.022427): the upper end is
    // beyond +2.0, so not equivalent.
    // One-sided p-values: H0 θ ≤ −2: z = (1.2 + 2)/0.5 = 6.4, p ≈ 8e-11;
    // H0 θ ≥ 2: z = (2 − 1.2)/0.5 = 1.6, p = 1 − Φ(1.6) = 1 − 0.94520 = 0.05480 > 0.05.
    let t = tost(1.2, 0.5, 2.0, 0.05, None).unwrap();
    assert!((t.interval.0 - (1.2 - Z95 * 0.5)).abs() < 1e-6, "{t:?}");
    assert!((t.interval.1 - 2.022427).abs() < 1e-6, "{t:?}");
    assert!(!t.equivalent);
    assert!((t.p_value - 0.05480).abs() < 5e-6, "{t:?}");
}

#[test]
fn tost_equivalent_hand_worked() {
    // estimate 0.3, se 0.4, margin 1.5: interval 0.3 ± 0.657942 = (−0.357942, 0.957942),
    // inside (−1.5, 1.5): equivalent. p = max(1 − Φ(4.5), 1 − Φ(3.0)) = 1 − 0.99865 = 0.00135.
    let t = tost(0.3, 0.4, 1.5, 0.05, None).unwrap();
    assert!((t.interval.0 + 0.357942).abs() < 1e-6 && (t.interval.1 - 0.957942).abs() < 1e-6);
    assert!(t.equivalent);
    assert!((t.p_value - 0.00135).abs() < 5e-6, "{t:?}");
    // The decision and the p-value agree: equivalent exactly when p < α.
    for est in [-1.0, -0.5, 0.0, 0.7, 0.84, 0.86, 1.2] {
        let t = tost(est, 0.4, 1.5, 0.05, None).unwrap();
        assert_eq!(t.equivalent, t.p_value < 0.05, "estimate {est}: {t:?}");
    }
}

#[test]
fn tost_refuses_bad_arguments() {
    assert!(tost(0.0, 0.0, 1.0, 0.05, None).is_err());
    assert!(tost(0.0, 1.0, -1.0, 0.05, None).is_err());
    assert!(tost(f64::NAN, 1.0, 1.0, 0.05, None).is_err());
    assert!(tost(0.0, 1.0, 1.0, 0.5, None).is_err());
}

#[test]
fn wald_hand_worked() {
    // change (1, 2, 0, 0, 0, 0), covariance diag(1, 4, 1, 1, 1, 1):
    // W = 1²/1 + 2²/4 = 2 on 6 dof. For even dof the chi-square tail is a finite sum:
    // P(χ²_6 > 2) = e^{−1} (1 + 1 + 1²/2) = 2.5/e = 0.9196986.
    let change = Vector6::new(1.0, 2.0, 0.0, 0.0, 0.0, 0.0);
    let cov = Matrix6::from_diagonal(&Vector6::new(1.0, 4.0, 1.0, 1.0, 1.0, 1.0));
    let projector = observed_projector(&[cov]);
    assert!((projector - Matrix6::identity()).norm() < 1e-12);
    let w = wald_on_observed(&change, &cov, &projector).unwrap();
    assert!((w.statistic - 2.0).abs() < 1e-12);
    assert_eq!(w.dof, 6);
    let expected = 2.5 / std::f64::consts::E;
    assert!((w.p_value.unwrap() - expected).abs() < 1e-9, "{w:?}");
}

#[test]
fn wald_ignores_unobserved_directions() {
    // BEFORE does not observe roll (zero variance there: a pseudo-inverse of information),
    // AFTER does not observe yaw: only four directions are tested, whatever the change there.
    let mut before = Matrix6::from_diagonal(&Vector6::new(1.0, 1.0, 1.0, 0.01, 0.01, 0.0));
    let mut after = Matrix6::from_diagonal(&Vector6::new(1.0, 1.0, 1.0, 0.0, 0.01, 0.01));
    before[(0, 1)] = 0.3;
    before[(1, 0)] = 0.3;
    after[(2, 4)] = 0.02;
    after[(4, 2)] = 0.02;
    let projector = observed_projector(&[before, after]);
    assert_eq!(
        observed_axes(&projector),
        [true, true, true, false, true, false]
    );
    let small = Vector6::new(0.5, -0.2, 0.1, 0.0, 0.05, 0.0);
    let huge = small + Vector6::new(0.0, 0.0, 0.0, 40.0, 0.0, -40.0);
    let a = wald_on_observed(&small, &(before + after), &projector).unwrap();
    let b = wald_on_observed(&huge, &(before + after), &projector).unwrap();
    assert_eq!(a.dof, 4);
    assert!((a.statistic - b.statistic).abs() < 1e-9 * a.statistic.max(1.0));
    let none = wald_on_observed(
        &small,
        &Matrix6::zeros(),
        &observed_projector(&[Matrix6::zeros()]),
    )
    .unwrap();
    assert_eq!((none.dof, none.p_value), (0, None));
}

fn axis(result: AxisResult) -> AxisEquivalence {
    AxisEquivalence {
        axis: "x",
        unit: "mm",
        estimate: 0.0,
        standard_error: Some(1.0),
        interval: Some([-1.0, 1.0]),
        tolerance: 5.0,
        p_value: Some(0.01),
        interval_outside: false,
        result,
    }
}

#[test]
fn outcome_rule() {
    use AxisResult::*;
    let all = |r: AxisResult| vec![axis(r); 6];
    assert_eq!(decide(&all(Equivalent)), ChangeOutcome::Unchanged);
    let mut mixed = all(Equivalent);
    mixed[4] = axis(Straddles);
    assert_eq!(decide(&mixed), ChangeOutcome::Inconclusive);
    mixed[1] = axis(Unobserved);
    assert_eq!(decide(&mixed), ChangeOutcome::Inconclusive);
    mixed[2] = axis(Beyond);
    assert_eq!(decide(&mixed), ChangeOutcome::Changed);
}

fn camera(fx: f64) -> CameraFile {
    CameraFile {
        model: "pinhole".into(),
        width: 1280,
        height: 960,
        fx,
        fy: fx,
        cx: 640.5,
        cy: 479.5,
        skew: 0.0,
        distortion: DistortionFile::default(),
        pixel_sigma: 0.5,
    }
}

fn survey_side(position_m: [f64; 3], sigma_mm: f64, sigma_deg: f64, fx: Option<f64>) -> Side {
    let mut file = MountFile::new(position_m, [2.0, -3.0, 0.5]);
    let var = [sigma_mm.powi(2); 3]
        .into_iter()
        .chain([sigma_deg.powi(2); 3])
        .collect::<Vec<f64>>();
    file.covariance = Some(std::array::from_fn(|r| {
        std::array::from_fn(|c| if r == c { var[r] } else { 0.0 })
    }));
    file.camera = fx.map(camera);
    Side {
        mount: file.to_mount(),
        covariance: Matrix6::from_fn(|r, c| if r == c { var[r] } else { 0.0 }),
        camera: file.camera.clone(),
        summary: SideSummary {
            path: "hand-made".into(),
            kind: SideKind::SurveyFile,
            mount: file,
            used: None,
            change_points: 0,
            warnings: Vec::new(),
        },
    }
}

#[test]
fn pure_translation_between_hand_made_surveys() {
    // AFTER sits 3 mm further along body x with the same attitude; both surveyed to 1 mm and
    // 0.02 deg (one sigma). The change is (3, 0, 0) mm, its variance 1 + 1 = 2 mm² per axis:
    // 95% half-width 1.959964·√2 = 2.771808 mm; x's 90% interval 3 ± 1.644854·√2 =
    // 3 ± 2.326174 = (0.673826, 5.326174), which crosses the 5 mm tolerance: inconclusive.
    let before = survey_side([1.0, 0.3, -0.9], 1.0, 0.02, Some(880.0));
    let after = survey_side([1.003, 0.3, -0.9], 1.0, 0.02, Some(880.0));
    let policy = Policy::default();
    let outcome = compare_sides(&before, &after, &policy).unwrap();
    assert!((outcome.translation_mm[0] - 3.0).abs() < 1e-9);
    assert!(outcome.rotation_deg.iter().all(|r| r.abs() < 1e-12));
    let half = outcome.translation_ci95_mm[1].unwrap();
    assert!((half - 2.771808).abs() < 1e-5, "{half}");
    let x = &outcome.equivalence.axes[0];
    let [lo, hi] = x.interval.unwrap();
    assert!((lo - 0.673826).abs() < 1e-5 && (hi - 5.326174).abs() < 1e-5);
    assert_eq!(x.result, AxisResult::Straddles);
    assert_eq!(outcome.outcome, ChangeOutcome::Inconclusive);
    assert!(outcome.warnings.is_empty(), "{:?}", outcome.warnings);
    // A wider tolerance decides it; a different focal length is flagged as a camera change.
    let wide = Policy {
        max_translation_mm: 6.0,
        ..policy
    };
    let swapped = survey_side([1.003, 0.3, -0.9], 1.0, 0.02, Some(884.0));
    let outcome = compare_sides(&before, &swapped, &wide).unwrap();
    assert_eq!(outcome.outcome, ChangeOutcome::Unchanged);
    assert_eq!(outcome.cameras.same, Some(false));
    let names: Vec<&str> = outcome
        .cameras
        .differences
        .iter()
        .map(|d| d.parameter.as_str())
        .collect();
    assert_eq!(names, ["fx", "fy"]);
    assert_eq!(outcome.warnings[0].code, GateWarningCode::CameraChanged);
    let unknown = survey_side([1.003, 0.3, -0.9], 1.0, 0.02, None);
    let outcome = compare_sides(&before, &unknown, &wide).unwrap();
    assert_eq!(outcome.warnings[0].code, GateWarningCode::CameraUnknown);
}

#[test]
fn an_unobserved_axis_survives_the_file_round_trip() {
    // A survey whose keypoints miss roll writes a zero covariance row and an infinite
    // half-width (`.inf`); the file must read back as it was written.
    let mut file = MountFile::new([1.0, 0.3, -0.9], [2.0, -3.0, 0.5]);
    file.covariance = Some(std::array::from_fn(|r| {
        std::array::from_fn(|c| if r == c && r < 5 { 0.01 } else { 0.0 })
    }));
    file.ci95 = Some(MountCi95File {
        position_mm: [0.2, 0.2, 0.2],
        yaw_deg: 0.2,
        pitch_deg: 0.2,
        roll_deg: f64::INFINITY,
    });
    // The camera as the reader normalises it (explicit zero tangential terms).
    let checked = camera(880.0).to_camera().unwrap();
    file.camera = Some(CameraFile::from_camera(&checked));
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("survey.yaml");
    std::fs::write(&path, yaml::to_string(&file).unwrap()).unwrap();
    let read = read_mount_file(&path).unwrap();
    assert_eq!(read, file);
}
