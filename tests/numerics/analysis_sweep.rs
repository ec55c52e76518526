//! Sweeps: grid order, error rows that never stop the sweep, progress reports, and (with the
//! solver) the determinacy boundary of the three-equation economy.

use std::sync::atomic::{AtomicUsize, Ordering};

use saddle::analysis::sweep::{
    check_axes, error_point, run_sweep, SweepAxis, SweepError, SweepPoint, SweepStatus,
};
use saddle::solution::Status;

fn axis(name: &str, values: Vec<f64>) -> SweepAxis {
    SweepAxis {
        name: name.into(),
        values,
    }
}

fn fake(values: &[f64]) -> SweepPoint {
    let x = values[0];
    if x < 0.0 {
        panic!("deliberate panic for a negative value");
    }
    if x == 0.5 {
        return error_point(values.to_vec(), "steady state not found (deliberate)");
    }
    SweepPoint {
        values: values.to_vec(),
        status: SweepStatus::Solved(if x > 1.0 {
            Status::Determinate
        } else {
            Status::Indeterminate
        }),
        unstable: Some(1),
        forward_looking: Some(2),
        largest_stable_modulus: Some(x / 10.0),
        message: None,
        expected_loss: None,
    }
}

#[test]
fn bad_points_become_error_rows_and_the_sweep_goes_on() {
    let axes = vec![
        axis("a", vec![-1.0, 0.0, 0.5, 1.5]),
        axis("b", vec![10.0, 20.0, 30.0]),
    ];
    let calls = AtomicUsize::new(0);
    let last = AtomicUsize::new(0);
    let progress = |done: usize, total: usize| {
        calls.fetch_add(1, Ordering::Relaxed);
        last.fetch_max(done, Ordering::Relaxed);
        assert_eq!(total, 12);
    };
    let r = run_sweep(&axes, fake, &progress).unwrap();
    assert_eq!(r.points.len(), 12);
    assert_eq!(calls.load(Ordering::Relaxed), 12);
    assert_eq!(last.load(Ordering::Relaxed), 12);
    // Row-major, first parameter slowest.
    for (k, p) in r.points.iter().enumerate() {
        assert_eq!(p.values, vec![axes[0].values[k / 3], axes[1].values[k % 3]]);
    }
    // The panicking points (a = -1) and the failing ones (a = 0.5) are error rows with messages.
    for p in &r.points[0..3] {
        assert_eq!(p.status, SweepStatus::Error);
        assert!(p.message.as_deref().unwrap().contains("internal error"));
        assert_eq!(p.unstable, None);
    }
    for p in &r.points[6..9] {
        assert_eq!(p.status, SweepStatus::Error);
        assert!(p.message.as_deref().unwrap().contains("steady state"));
    }
    assert!(r.points[3..6]
        .iter()
        .all(|p| p.status == SweepStatus::Solved(Status::Indeterminate)));
    assert!(r.points[9..12]
        .iter()
        .all(|p| p.status == SweepStatus::Solved(Status::Determinate)));
    let counts = r.status_counts();
    assert_eq!(
        counts
            .iter()
            .find(|(s, _)| *s == SweepStatus::Error)
            .unwrap()
            .1,
        6
    );
}

#[test]
fn axes_are_checked() {
    assert_eq!(check_axes(&[]), Err(SweepError::AxisCount(0)));
    let a = axis("a", vec![1.0]);
    assert_eq!(
        check_axes(&[a.clone(), a.clone(), a.clone()]),
        Err(SweepError::AxisCount(3))
    );
    assert_eq!(
        check_axes(&[a.clone(), a.clone()]),
        Err(SweepError::Duplicate("a".into()))
    );
    assert_eq!(
        check_axes(&[axis("x", vec![])]),
        Err(SweepError::EmptyAxis("x".into()))
    );
    assert!(matches!(
        check_axes(&[axis("x", vec![f64::NAN])]),
        Err(SweepError::NonFinite { .. })
    ));
    let big: Vec<f64> = (0..2000).map(|i| i as f64).collect();
    assert!(matches!(
        check_axes(&[axis("x", big.clone()), axis("y", big)]),
        Err(SweepError::TooManyPoints(4_000_000))
    ));
}

#[test]
fn outputs_have_the_contract_columns() {
    let axes = vec![axis("phi_pi", vec![0.5, 1.5])];
    let r = run_sweep(&axes, fake, &|_, _| {}).unwrap();
    let csv = saddle::output::sweep::to_csv(&r);
    let mut lines = csv.lines();
    assert_eq!(
        lines.next().unwrap(),
        "phi_pi,status,unstable,forward_looking,largest_stable_modulus,message"
    );
    assert_eq!(
        lines.next().unwrap(),
        "0.5,error,,,,steady state not found (deliberate)"
    );
    assert_eq!(lines.next().unwrap(), "1.5,determinate,1,2,0.15,");
    let json = saddle::output::sweep::to_json(&r).to_pretty_string();
    let v: serde_json::Value = serde_json::from_str(&json).unwrap();
    assert_eq!(v[0]["status"], "error");
    assert!(v[0]["unstable"].is_null());
    assert_eq!(v[1]["phi_pi"], 1.5);
    assert_eq!(v[1]["forward_looking"], 2);
    assert!(v[1]["message"].is_null());
    let text = saddle::output::sweep::to_text(&r);
    assert!(text.contains("determinate") && text.contains("1 point(s) failed"));
}
