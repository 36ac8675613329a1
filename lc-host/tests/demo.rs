//! `lc-host demo` end to end: the newcomer's first command.

use std::process::Command;

#[test]
fn the_demo_runs_the_whole_job() {
    let dir = std::env::temp_dir().join(format!("lc-demo-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    let out = Command::new(env!("CARGO_BIN_EXE_lc-host"))
        .arg("demo")
        .arg(&dir)
        .output()
        .unwrap();
    let text = String::from_utf8_lossy(&out.stdout);
    assert!(
        out.status.success(),
        "{text}\n{}",
        String::from_utf8_lossy(&out.stderr)
    );
    assert!(text.contains("22 of 24 units pass"), "{text}");
    assert!(
        text.contains("every stage within its stated bound"),
        "{text}"
    );
    assert!(text.contains("Not a safety-rated component"));
    // Issue 19, item 1: every image the demo makes is verified and passes:
    // 22 proximity images (one of them in detail), the 8 tank probes (their
    // level images failed before) and a metal unit.
    assert!(
        text.contains("32 of 32 images verified within every stage's bound"),
        "{text}"
    );
    for (kind, n) in [
        ("proximity", 22),
        ("level with reference electrode", 8),
        ("metal", 1),
    ] {
        let lines = text
            .lines()
            .filter(|l| l.contains(&format!(" {kind} ")) && l.ends_with(": pass"))
            .count();
        assert_eq!(lines, n, "{kind}: {text}");
    }
    // It ends by pointing at the lot report.
    let last = text.lines().last().unwrap_or("");
    assert!(last.contains("report/index.html"), "{last}");
    for f in [
        "rig.csv",
        "field.csv",
        "readings.csv",
        "units.db",
        "images/DEMO-01-0007.lcim",
        "report/index.html",
        "report/plots/rest-frequency.svg",
        "report/plots/trace.svg",
        "report/units/DEMO-01-0012.html",
        "report/units/DEMO-01-0012-residual.svg",
        "report-tank/index.html",
        "images/TANK-01-0008.lcim",
        "images/METAL-01-0001.lcim",
    ] {
        assert!(dir.join(f).exists(), "{f} missing");
    }
    // Every injected fault (a gate with no sensor cycles or no reference
    // ticks) is flagged as a sensor fault, and nothing else is.
    let field = std::fs::read_to_string(dir.join("field.csv")).unwrap();
    let injected = field
        .lines()
        .skip(2)
        .filter(|l| {
            let f: Vec<&str> = l.split(',').collect();
            f[2] == "0" || f[3] == "0"
        })
        .count();
    let readings = std::fs::read_to_string(dir.join("readings.csv")).unwrap();
    let flagged = readings
        .lines()
        .skip(2)
        .filter(|l| l.split(',').nth(3).is_some_and(|s| s.starts_with("fault_")))
        .count();
    assert!(injected > 30, "{injected}");
    assert_eq!(flagged, injected);
    std::fs::remove_dir_all(&dir).ok();
}
