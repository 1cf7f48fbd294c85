//! The worked example of docs/datasets.md, run as written: its files are read out of the page,
//! checked and loaded, and every number the page quotes is compared with the served path.
//! Published formulas: Osterbrock & Ferland (2006), eq. 3.20 (q_ul), eq. 5.5 (the [N II]
//! temperature ratio, from memory); detailed balance; hc/k from CODATA 2018.

use ratewell_proto::rule::{Direction, OutsidePolicy};
use ratewell_service::binary::check_dataset;
use ratewell_service::engine::lookup::LookupQuery;
use ratewell_service::engine::solve::{SolveAnswer, SolveQuery};
use ratewell_service::engine::units::{RateUnit, TemperatureUnit};
use ratewell_service::engine::{Engine, EngineConfig, Selector};
use ratewell_service::limits::Limits;
use std::path::{Path, PathBuf};

/// The page, and its files: fenced toml blocks whose first line is `# file: NAME`.
fn example_files() -> (String, Vec<(String, String)>) {
    let page_path = Path::new(env!("CARGO_MANIFEST_DIR")).join("../docs/datasets.md");
    let page = std::fs::read_to_string(&page_path).expect("docs/datasets.md is readable");
    let example = page
        .split("## Worked example")
        .nth(1)
        .expect("the page has a worked example");
    let mut files = Vec::new();
    for block in example.split("```toml\n").skip(1) {
        let text = block.split("```").next().expect("a closed block");
        if let Some(name) = text.lines().next().and_then(|l| l.strip_prefix("# file: ")) {
            files.push((name.trim().to_string(), text.to_string()));
        }
    }
    (page, files)
}

fn write_folder(files: &[(String, String)], tag: &str) -> PathBuf {
    let dir = std::env::temp_dir().join(format!("ratewell-worked-{tag}-{}/my-ions", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    for (name, text) in files {
        std::fs::write(dir.join(name), text).unwrap();
    }
    dir
}

fn engine_with(dir: &Path) -> Engine {
    let engine = Engine::new(EngineConfig::default());
    engine.load_path(dir).expect("the worked example loads");
    engine
}

fn solve(engine: &Engine, temperatures: Vec<f64>, densities: Vec<f64>) -> SolveAnswer {
    engine
        .solve(&SolveQuery::grid(
            Selector::newest("my-ions"),
            "N II",
            temperatures,
            densities,
        ))
        .expect("solve succeeds")
}

#[test]
fn the_page_has_both_files_and_they_check_clean() {
    let (page, files) = example_files();
    let names: Vec<&str> = files.iter().map(|(n, _)| n.as_str()).collect();
    assert_eq!(names, ["dataset.toml", "n-ii.toml"]);
    let dir = write_folder(&files, "check");
    let (report, loads) = check_dataset(&dir, &Limits::default());
    assert!(loads, "{report}");
    assert!(
        report.contains("loads: dataset my-ions version 1.0.0, content hash "),
        "{report}"
    );
    assert!(
        report.contains("1 species, 5 levels, 10 collisional transitions"),
        "{report}"
    );
    assert!(report.trim_end().ends_with("0 warning(s)"), "{report}");
    // The slip the page shows is refused with the block's line and the field.
    let slipped: Vec<(String, String)> = files
        .iter()
        .map(|(n, t)| {
            (
                n.clone(),
                t.replacen("upsilon = [0.41, 0.41, 0.41]", "upsilon = [0.41, -0.41, 0.41]", 1),
            )
        })
        .collect();
    let dir = write_folder(&slipped, "slip");
    let (report, loads) = check_dataset(&dir, &Limits::default());
    assert!(!loads, "{report}");
    let problem = report.lines().nth(1).expect("one problem line");
    assert!(
        problem.contains("n-ii.toml:") && problem.contains("upsilon[1]"),
        "{problem}"
    );
    assert!(problem.contains("-0.41"), "{problem}");
    // The page shows the same message, with the line number left out.
    let shown = problem.split_once(": ").map(|(_, m)| m).unwrap_or(problem);
    assert!(page.contains(shown), "the page should show: {shown}");
}

#[test]
fn the_rate_coefficients_quoted_match_the_closed_form_and_the_server() {
    let (page, files) = example_files();
    let engine = engine_with(&write_folder(&files, "rates"));
    let answer = engine
        .lookup(&LookupQuery {
            selector: Selector::newest("my-ions"),
            species: "N II".into(),
            transitions: vec![(4, 3)],
            temperatures: vec![1.0e4],
            temperature_unit: TemperatureUnit::Kelvin,
            direction: Direction::Both,
            rate_unit: RateUnit::CubicCentimetrePerSecond,
            outside: OutsidePolicy::Refuse,
            grid: None,
        })
        .expect("lookup succeeds");
    // q_ul = 8.629e-6 Upsilon / (g_u T^1/2) (Osterbrock & Ferland 2006, eq. 3.20; the constant
    // to four figures, so 1e-4 relative); q_lu by detailed balance with hc/k = 1.438777 cm K.
    let q_ul = 8.629e-6 * 1.4667 / (5.0 * 100.0);
    let q_lu = q_ul * (-(15316.2 - 130.8) * 1.438_776_877 / 1.0e4_f64).exp();
    let (served_ul, served_lu) = (answer.deexcitation[0], answer.excitation[0]);
    assert!((served_ul / q_ul - 1.0).abs() < 1e-4, "{served_ul:e} vs {q_ul:e}");
    assert!((served_lu / q_lu - 1.0).abs() < 1e-4, "{served_lu:e} vs {q_lu:e}");
    // ...and the page quotes both to four figures.
    assert!(page.contains(&format!("= {q_ul:.3e}")), "q_ul {q_ul:.3e}");
    assert!(page.contains(&format!("= {q_lu:.3e}")), "q_lu {q_lu:.3e}");
}

#[test]
fn the_critical_density_and_the_temperature_diagnostic_hold() {
    let (page, files) = example_files();
    let engine = engine_with(&write_folder(&files, "solve"));
    // n_c(1D2) = sum A / sum q_down (downward only, as served), by hand.
    let by_hand = (5.35e-7 + 1.0e-3 + 3.0e-3) / (8.629e-6 * 2.64 / 500.0);
    let answer = solve(&engine, vec![1.0e4], vec![100.0]);
    let served = answer.points[0].critical_densities_per_cm3[3];
    assert!((served / by_hand - 1.0).abs() < 1e-4, "{served:e} vs {by_hand:e}");
    assert!(
        page.contains(&format!("is {by_hand:.2e} cm^-3")),
        "n_c {by_hand:.2e}"
    );
    // (j6548 + j6583) / j5755 = 8.23 exp(2.50e4/T) / (1 + 4.4e-3 ne / T^1/2) (Osterbrock &
    // Ferland 2006, eq. 5.5; from memory). Tolerance 10 %: the fit comes from the authors' own
    // atomic data, whose A values and collision strengths are known to about 10 %.
    let published = |t: f64, ne: f64| 8.23 * (2.50e4 / t).exp() / (1.0 + 4.4e-3 * ne / t.sqrt());
    assert!(page.contains(&format!("{:.1} at 1e4 K and", published(1.0e4, 100.0))));
    let temps = vec![7000.0, 8000.0, 10000.0, 12000.0, 15000.0, 18000.0];
    let answer = solve(&engine, temps.clone(), vec![100.0]);
    let line = |p: &ratewell_service::engine::solve::PointAnswer, u: u32, l: u32| {
        p.lines
            .iter()
            .find(|x| x.upper == u && x.lower == l)
            .unwrap_or_else(|| panic!("line {u}-{l}"))
            .emissivity
    };
    for (point, &t) in answer.points.iter().zip(&temps) {
        let ours = (line(point, 4, 2) + line(point, 4, 3)) / line(point, 5, 4);
        let want = published(t, 100.0);
        assert!(
            ((ours - want) / want).abs() < 0.10,
            "T = {t} K: ours {ours:.1}, published {want:.1}"
        );
    }
}
