//! Every shipped spec checks and fits, and every shipped scenario simulates.

use crate::common::*;

fn files(dir: &str) -> Vec<String> {
    let mut v: Vec<String> = std::fs::read_dir(path(dir))
        .unwrap()
        .filter_map(|e| e.ok())
        .map(|e| e.path())
        .filter(|p| p.extension().is_some_and(|x| x == "toml"))
        .map(|p| p.strip_prefix(root()).unwrap().display().to_string())
        .collect();
    v.sort();
    v
}

#[test]
fn every_spec_checks_and_fits() {
    let specs = files("specs");
    assert!(specs.len() >= 3, "{specs:?}");
    for s in &specs {
        let (code, out, err) = run(&["check", s]);
        assert_eq!(code, 0, "{s}: {err}");
        assert!(
            out.contains("situations") && out.contains("parameters to estimate"),
            "{s}: {out}"
        );
        let (code, out, err) = run(&["fit", s, "--draws", "200"]);
        assert_eq!(code, 0, "{s}: {err}");
        assert!(out.contains("converged") && out.contains("Cautions"), "{s}");
    }
}

#[test]
fn every_shipped_scenario_simulates() {
    let scenarios = files("specs/scenarios");
    assert!(scenarios.len() >= 5);
    for sc in &scenarios {
        let text = std::fs::read_to_string(path(sc)).unwrap();
        // Scenarios name the demo they belong to by the alternatives they use.
        let spec = if text.contains("marrowby") || text.contains("own_label") {
            "specs/grocery.toml"
        } else if text.contains("potted") || text.contains("plugs") {
            "specs/garden_classes.toml"
        } else if text.contains("coach") {
            "specs/express_survey.toml"
        } else if text.contains("jobs_work") {
            "specs/velmora_destinations.toml"
        } else {
            "specs/commute.toml"
        };
        let (code, out, err) = run(&[
            "simulate",
            spec,
            "--scenario",
            sc,
            "--draws",
            "50",
            "--by",
            if spec.contains("commute") {
                "district"
            } else if spec.contains("express") {
                "task"
            } else if spec.contains("garden") {
                "occasion"
            } else if spec.contains("velmora") {
                "purpose"
            } else {
                "week"
            },
        ]);
        assert_eq!(code, 0, "{sc}: {err}");
        assert!(out.contains("sharecast forecast"), "{sc}: {out}");
    }
}
