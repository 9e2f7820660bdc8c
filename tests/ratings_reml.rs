//! `ratings`: REML estimates of the nested model y = μ + a_incident +
//! b_unit + e against statsmodels' MixedLM (REML, PyPI) on a committed
//! fixture of invented simulated readings (tests/fixtures/
//! ratings_statsmodels.py): mean within 0.5 %, sd and measurement sd within
//! 5 %, ρ within 0.05.

use oddsboard::report::ratings::{Group, estimate};
use serde_json::Value;

#[test]
fn reml_matches_statsmodels_mixedlm() {
    let text = std::fs::read_to_string("tests/fixtures/ratings_statsmodels.json").expect("fixture");
    let doc: Value = serde_json::from_str(&text).expect("json");
    let groups = doc["groups"].as_array().expect("groups");
    assert_eq!(groups.len(), 2);
    for g in groups {
        let mut group = Group::default();
        for r in g["readings"].as_array().unwrap() {
            group.add(
                r["incident"].as_str().unwrap(),
                r["unit"].as_str().unwrap(),
                r["value"].as_f64().unwrap(),
            );
        }
        let ty = g["unit_type"].as_str().unwrap();
        let est = estimate(ty, g["trait"].as_str().unwrap(), &group).expect("estimates");
        let sm = &g["statsmodels"];
        let f = |k: &str| sm[k].as_f64().unwrap();
        let rel = |a: f64, b: f64| (a - b).abs() / b.abs();
        eprintln!(
            "{ty}: mean {:.4} / {:.4}, sd {:.4} / {:.4}, rho {:.4} / {:.4}, measurement sd {:.4} / {:.4} (ours / statsmodels)",
            est.mean,
            f("mean"),
            est.sd,
            f("sd"),
            est.rho,
            f("rho"),
            est.measurement_sd,
            f("measurement_sd")
        );
        assert!(
            rel(est.mean, f("mean")) < 0.005,
            "{ty}: mean {} vs {}",
            est.mean,
            f("mean")
        );
        assert!(
            rel(est.sd, f("sd")) < 0.05,
            "{ty}: sd {} vs {}",
            est.sd,
            f("sd")
        );
        assert!(
            rel(est.measurement_sd, f("measurement_sd")) < 0.05,
            "{ty}: measurement sd {} vs {}",
            est.measurement_sd,
            f("measurement_sd")
        );
        assert!(
            (est.rho - f("rho")).abs() < 0.05,
            "{ty}: rho {} vs {}",
            est.rho,
            f("rho")
        );
        // Counts, and intervals that hold their estimate.
        assert_eq!(est.observations, g["readings"].as_array().unwrap().len());
        for e in [
            est.intervals.mean,
            est.intervals.sd,
            est.intervals.rho,
            est.intervals.measurement_sd,
        ] {
            assert!(e.low <= e.value && e.value <= e.high, "{ty}: {e:?}");
        }
        assert!(est.warnings.is_empty(), "{ty}: {:?}", est.warnings);
    }
}

/// Thin data are said: three incidents cannot separate ρ.
#[test]
fn thin_data_warn() {
    let mut g = Group::default();
    for (i, inc) in ["a", "b", "c"].iter().enumerate() {
        for u in 0..3 {
            for r in 0..2 {
                g.add(
                    inc,
                    &format!("U{u}"),
                    100.0 + 7.0 * i as f64 + 3.0 * u as f64 + r as f64,
                );
            }
        }
    }
    let est = estimate("engine", "water", &g).expect("estimates");
    assert!(
        est.warnings.iter().any(|w| w.contains("only 3 incidents")),
        "{:?}",
        est.warnings
    );
}
