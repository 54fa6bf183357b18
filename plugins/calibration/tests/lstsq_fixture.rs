//! The calibration least squares against numpy.linalg.lstsq (numpy 2.4.6): fixture written
//! by tests/reference/calibration/gen_lstsq_fixture.py.

use rfsite_plugin_calibration::lstsq;

const FIXTURE: &str = include_str!("../../../tests/reference/calibration/lstsq_fixture.csv");

#[test]
fn agrees_with_numpy_lstsq() {
    let (mut x, mut y, mut beta, mut se, mut rss) =
        (Vec::new(), Vec::new(), Vec::new(), Vec::new(), f64::NAN);
    for line in FIXTURE.lines().filter(|l| !l.starts_with('#')).skip(1) {
        let f: Vec<&str> = line.split(',').collect();
        let nums: Vec<f64> = f[1..]
            .iter()
            .filter(|s| !s.is_empty())
            .map(|s| s.parse().unwrap())
            .collect();
        match f[0] {
            "obs" => {
                x.push(nums[..4].to_vec());
                y.push(nums[4]);
            }
            "beta" => beta = nums,
            "se" => se = nums,
            "rss" => rss = nums[0],
            other => panic!("unknown role {other}"),
        }
    }
    assert_eq!((x.len(), beta.len(), se.len()), (40, 4, 4));
    let f = lstsq(&x, &y).unwrap();
    for j in 0..4 {
        assert!(
            (f.beta[j] - beta[j]).abs() < 1e-9,
            "beta[{j}] {} vs numpy {}",
            f.beta[j],
            beta[j]
        );
        assert!(
            (f.se[j] - se[j]).abs() < 1e-9,
            "se[{j}] {} vs numpy {}",
            f.se[j],
            se[j]
        );
    }
    assert!((f.rss - rss).abs() < 1e-8 * rss);
    assert_eq!(f.dof, 36);
}
