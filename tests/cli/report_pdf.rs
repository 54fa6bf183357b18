//! The demo report renders, and a PDF text extractor finds what a reader needs.

use crate::cli::util::{demo_report, pdf_pages, pdf_text, pdf_text_raw, rfsite, root};

#[test]
fn demo_report_has_the_sections_verdicts_and_audit_trail() {
    let (out_dir, f) = demo_report();
    let pdf = out_dir.path().join("report.pdf");
    assert!(pdf_pages(&pdf) >= 6);
    let text = pdf_text(&pdf);
    for s in [
        "Executive summary",
        "Scope and method",
        "Site description",
        "Coverage by floor and service",
        "Findings",
        "Remediation options",
        "Two-way coverage: uplink",
        "Safety and compliance cautions",
        "Audit trail",
        "authority having jurisdiction",
    ] {
        assert!(text.contains(s), "PDF lacks `{s}`");
    }
    assert!(text.contains("PASS") || text.contains("FAIL"));
    // findings.json essentials (DESIGN.md contract).
    assert_eq!(f["schema"], "rfsite-findings/1");
    assert_eq!(f["tool"]["name"], "rfsite");
    assert!(f["site"]["id"].is_string() && f["site"]["name"].is_string());
    for s in f["services"].as_array().unwrap() {
        assert!(s["freq_mhz"].is_number() && s["threshold_dbm"].is_number());
        for fl in s["floors"].as_array().unwrap() {
            let a = fl["predicted_area_fraction"].as_f64().unwrap();
            assert!((0.0..=1.0).contains(&a));
            assert!(fl["pass"].is_boolean() && fl["id"].is_string());
        }
    }
    // No critical or major coverage finding contradicts a floor the verdict passes.
    for x in f["findings"].as_array().unwrap() {
        let (Some(svc), Some(floor)) = (x["service"].as_str(), x["floor"].as_str()) else {
            continue;
        };
        let sev = x["severity"].as_str().unwrap();
        if !x["id"].as_str().unwrap().starts_with("coverage-")
            || !(sev == "critical" || sev == "major")
        {
            continue;
        }
        let s = f["services"]
            .as_array()
            .unwrap()
            .iter()
            .find(|s| s["id"] == svc)
            .unwrap();
        let fl = s["floors"]
            .as_array()
            .unwrap()
            .iter()
            .find(|x| x["id"] == floor)
            .unwrap();
        assert_eq!(fl["pass"], false, "{} is {sev} on a passing floor", x["id"]);
    }
    for x in f["findings"].as_array().unwrap() {
        assert!(["critical", "major", "minor", "info"].contains(&x["severity"].as_str().unwrap()));
        for k in ["id", "title", "detail", "plugin"] {
            assert!(x[k].is_string(), "finding lacks {k}");
        }
    }
    // Audit trail: the SHA-256 of every input appears in the PDF (pdftotext may wrap).
    let flat: String = text.split_whitespace().collect();
    for i in f["inputs"].as_array().unwrap() {
        let h = i["sha256"].as_str().unwrap();
        assert_eq!(h.len(), 64);
        assert!(
            flat.contains(h),
            "hash of {} missing from the PDF",
            i["path"]
        );
    }
    assert!(out_dir.path().join("figures").read_dir().unwrap().count() >= 2);
}

#[test]
fn typst_special_characters_print_literally() {
    let dir = tempfile::tempdir().unwrap();
    let starter = std::fs::read_to_string(root().join("templates/starter/site.toml")).unwrap();
    let nasty = r#"Block #7 $cost *bold* _under_ @ref <tag> [x] back\slash `tick`"#;
    let text = starter
        .replace(
            "name = \"New site\"",
            &format!("name = {}", toml_str(nasty)),
        )
        .replace(
            "client = \"Client name\"",
            "client = \"=== heading? #set page(width: 1cm)\"",
        );
    std::fs::write(dir.path().join("site.toml"), text).unwrap();
    let out = rfsite()
        .arg("report")
        .arg(dir.path())
        .arg("-o")
        .arg(dir.path().join("out"))
        .output()
        .unwrap();
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let t = pdf_text(&dir.path().join("out/report.pdf"));
    for piece in [
        "Block #7",
        "$cost",
        "*bold*",
        "_under_",
        "@ref",
        "<tag>",
        "[x]",
        "back\\slash",
        "`tick`",
        "#set page(width: 1cm)",
    ] {
        assert!(t.contains(piece), "PDF text lacks `{piece}`");
    }
}

fn toml_str(s: &str) -> String {
    format!("'{s}'")
}

#[test]
fn second_template_renders_and_looks_different() {
    let dir = tempfile::tempdir().unwrap();
    let site = root().join("templates/starter/site.toml");
    let a = dir.path().join("default");
    let b = dir.path().join("classic");
    for (out, tpl) in [(&a, None), (&b, Some(root().join("templates/classic")))] {
        let mut cmd = rfsite();
        cmd.arg("report").arg(&site).arg("-o").arg(out);
        if let Some(t) = tpl {
            cmd.arg("--template").arg(t);
        }
        let o = cmd.output().unwrap();
        assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    }
    let ta = pdf_text(&a.join("report.pdf"));
    let tb = pdf_text(&b.join("report.pdf"));
    assert!(ta.contains("Radio Coverage Assessment"));
    assert!(tb.contains("Meridian & Vale Radio Engineering"));
    assert!(!ta.contains("Meridian & Vale"));
}

#[test]
fn concrete_at_800_mhz_is_flagged_in_findings_and_report() {
    // ITU-R P.2040-3 Table 3 fits concrete over 1–100 GHz: 800 MHz is outside.
    let dir = tempfile::tempdir().unwrap();
    let starter = std::fs::read_to_string(root().join("templates/starter/site.toml")).unwrap();
    let text = starter
        .replace("material = \"brick-wall\"", "material = \"concrete\"")
        .replace("freq_mhz = 1842.5", "freq_mhz = 800.0");
    std::fs::write(dir.path().join("site.toml"), text).unwrap();
    let out = rfsite()
        .arg("report")
        .arg(dir.path())
        .arg("-o")
        .arg(dir.path().join("out"))
        .output()
        .unwrap();
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let f: serde_json::Value =
        serde_json::from_slice(&std::fs::read(dir.path().join("out/findings.json")).unwrap())
            .unwrap();
    let warned = f["warnings"].as_array().unwrap().iter().any(|w| {
        let m = w["message"].as_str().unwrap_or("");
        m.contains("concrete") && m.contains("extrapolated")
    });
    assert!(
        warned,
        "findings.json warnings lack the concrete range note"
    );
    let t = pdf_text(&dir.path().join("out/report.pdf"));
    let flat: String = t.split_whitespace().collect::<Vec<_>>().join(" ");
    assert!(
        flat.contains("concrete") && flat.contains("extrapolated"),
        "report appendix lacks the range note"
    );
}

/// Issue 12: the demo recommends a designed option that passes every floor, and the PDF
/// carries what findings.json says of it: the title, every antenna's coordinates to 0.01
/// (site units), every bill-of-quantities line, and the head end's per-channel output.
#[test]
fn demo_recommends_a_designed_option_with_coordinates_and_quantities() {
    let (out_dir, f) = demo_report();
    let flat: String = pdf_text_raw(&out_dir.path().join("report.pdf"))
        .split_whitespace()
        .collect();
    let squash = |s: &str| s.split_whitespace().collect::<String>();
    let recommended: Vec<&serde_json::Value> = f["remediation"]
        .as_array()
        .unwrap()
        .iter()
        .filter(|r| r["recommended"] == true)
        .collect();
    let designed: Vec<_> = recommended
        .iter()
        .filter(|r| r["plugin"] == "antenna-design")
        .collect();
    assert!(!designed.is_empty(), "no designed option is recommended");
    for r in designed {
        let after = &r["after"];
        assert_eq!(after["passes"], true, "{}", r["id"]);
        for s in after["services"].as_array().unwrap() {
            if s["id"] == r["service"] {
                for fl in s["floors"].as_array().unwrap() {
                    assert_eq!(fl["pass"], true, "{} {}", r["id"], fl["id"]);
                }
            }
        }
        assert!(
            flat.contains(&squash(r["title"].as_str().unwrap())),
            "title of {}",
            r["id"]
        );
        let antennas = r["antennas"].as_array().unwrap();
        assert!(!antennas.is_empty());
        for a in antennas {
            let p = a["position"].as_array().unwrap();
            let (x, y) = (p[0].as_f64().unwrap(), p[1].as_f64().unwrap());
            let id = a["id"].as_str().unwrap();
            // The installer schedule's x and y cells, side by side, and the change list.
            assert!(
                flat.contains(&format!("{x:.2}{y:.2}")),
                "{id}: schedule lacks ({x:.2}, {y:.2})"
            );
            assert!(
                flat.contains(&format!("{id}added")),
                "{id} not in the change list"
            );
            assert!(
                flat.contains(&format!("({x:.2},{y:.2})")),
                "{id}: change list lacks its position"
            );
        }
        for q in r["quantities"].as_array().unwrap() {
            let item = squash(q["item"].as_str().unwrap());
            let n = q["quantity"].as_f64().unwrap();
            assert!(
                flat.contains(&format!("{item}{n}")),
                "BoQ line {item} × {n} missing"
            );
        }
        let d = &r["distribution"];
        let pch = format!("{:.1}dBm", d["per_channel_dbm"].as_f64().unwrap());
        assert!(flat.contains(&pch), "head-end per-channel {pch} missing");
    }
}
