//! External plugins: a command run through the `rfsite-plugin/1` protocol. Its output lands
//! in findings.json and the report; each way a plugin can misbehave is a clear error naming
//! it, or a warning when it is `optional`.

use std::time::{Duration, Instant};

use crate::cli::util::{external_fixture, pdf_text, rfsite, root, run, starter_site_with, texts};

fn plugin_table(id: &str, script: &str, extra: &str) -> String {
    format!(
        "[plugins.{id}]\ncommand = \"python3\"\nargs = [{:?}]\nafter = [\"multi-wall\"]\n{extra}\n",
        external_fixture(script)
    )
}

/// Reports a starter site carrying the plugin table; returns (exit code, stderr, out dir).
fn report_with(table: &str) -> (i32, String, tempfile::TempDir) {
    let dir = tempfile::tempdir().unwrap();
    starter_site_with(dir.path(), table);
    let out = rfsite()
        .arg("report")
        .arg(dir.path())
        .arg("-o")
        .arg(dir.path().join("out"))
        .output()
        .unwrap();
    let (_, err) = texts(&out);
    assert!(!err.contains("panicked"), "{err}");
    (out.status.code().unwrap_or(-1), err, dir)
}

#[test]
fn interference_plugin_output_appears_in_findings_json_and_the_report() {
    let out_dir = tempfile::tempdir().unwrap();
    let out = rfsite()
        .arg("report")
        .arg(root().join("examples/interference-demo"))
        .arg("-o")
        .arg(out_dir.path())
        .output()
        .unwrap();
    let (_, err) = texts(&out);
    assert!(out.status.success(), "{err}");
    // The plugin's stderr reaches the log, prefixed with its id.
    assert!(
        err.contains("interference [orrin-works-office]: L0/lte2600:"),
        "{err}"
    );
    let f: serde_json::Value =
        serde_json::from_slice(&std::fs::read(out_dir.path().join("findings.json")).unwrap())
            .unwrap();
    let run = f["plugins"]
        .as_array()
        .unwrap()
        .iter()
        .find(|p| p["id"] == "interference")
        .expect("interference ran");
    assert_eq!(run["kind"], "external");
    assert_eq!(run["version"], "1.0.0");
    let finding = f["findings"]
        .as_array()
        .unwrap()
        .iter()
        .find(|x| x["id"] == "sir-lte2600-L0")
        .expect("SIR finding");
    assert_eq!(finding["plugin"], "interference");
    assert_eq!(finding["severity"], "major");
    assert!(f["tables"]
        .as_array()
        .unwrap()
        .iter()
        .any(|t| t["id"] == "interference-sir"));
    assert!(f["extra"]["interference"]["floors"][0]["median_sir_db"].is_number());
    let text = pdf_text(&out_dir.path().join("report.pdf"));
    assert!(
        text.contains("co-channel interference"),
        "report lacks the finding"
    );
    assert!(
        text.contains("Co-channel signal-to-interference ratio"),
        "report lacks the table"
    );
    assert!(
        text.contains("interference v1.0.0, external"),
        "report lacks the method entry"
    );
}

#[test]
fn options_reach_the_plugin_and_its_findings_are_attributed_to_it() {
    let (code, err, dir) = report_with(&plugin_table(
        "echo",
        "echo.py",
        "note = \"hello from the site\"",
    ));
    assert_eq!(code, 0, "{err}");
    assert!(
        err.contains("echo [new-site]: echo got 1 layer(s)"),
        "{err}"
    );
    let f: serde_json::Value =
        serde_json::from_slice(&std::fs::read(dir.path().join("out/findings.json")).unwrap())
            .unwrap();
    let x = f["findings"]
        .as_array()
        .unwrap()
        .iter()
        .find(|x| x["id"] == "echo-note")
        .unwrap();
    assert_eq!(x["title"], "Echo plugin says: hello from the site");
    assert_eq!(
        x["plugin"], "echo",
        "the host attributes findings to the plugin that returned them"
    );
    assert!(f["warnings"]
        .as_array()
        .unwrap()
        .iter()
        .any(|w| w["plugin"] == "echo" && w["message"] == "echo warning"));
}

#[test]
fn a_plugin_over_its_time_limit_is_killed_and_named() {
    let t0 = Instant::now();
    let (code, err, dir) = report_with(&plugin_table("slow", "sleep.py", "timeout_s = 1"));
    assert!(
        t0.elapsed() < Duration::from_secs(30),
        "the child was not killed"
    );
    assert_eq!(code, 1, "{err}");
    assert!(err.contains("plugin `slow` failed"), "{err}");
    assert!(
        err.contains("did not answer within its time limit of 1 s and was killed"),
        "{err}"
    );
    assert!(
        err.contains("slow [new-site]: thinking..."),
        "stderr goes to the log: {err}"
    );
    assert!(
        !dir.path().join("out/report.pdf").exists(),
        "a failed run writes nothing"
    );
}

#[test]
fn a_crashing_plugin_reports_its_exit_status_and_stderr_tail() {
    let (code, err, _d) = report_with(&plugin_table("antenna-model", "crash.py", ""));
    assert_eq!(code, 1, "{err}");
    assert!(err.contains("plugin `antenna-model` failed"), "{err}");
    assert!(err.contains("failed with exit status 3"), "{err}");
    assert!(err.contains("last lines of its stderr:\n    loading the antenna file\n    boom: the antenna file is missing"), "{err}");
}

#[test]
fn garbage_output_is_a_protocol_error() {
    let (code, err, _d) = report_with(&plugin_table("noisy", "garbage.py", ""));
    assert_eq!(code, 1, "{err}");
    assert!(err.contains("plugin `noisy` failed"), "{err}");
    assert!(
        err.contains("answer is not a valid `rfsite-plugin/1` response"),
        "{err}"
    );
    assert!(
        err.contains("its stdout began with `hello, this is not JSON`"),
        "{err}"
    );
}

#[test]
fn another_protocol_version_is_refused() {
    let (code, err, _d) = report_with(&plugin_table("future", "version.py", ""));
    assert_eq!(code, 1, "{err}");
    assert!(err.contains("plugin `future` failed"), "{err}");
    assert!(
        err.contains("answers in protocol `rfsite-plugin/2`, but rfsite speaks `rfsite-plugin/1`"),
        "{err}"
    );
}

#[test]
fn oversized_output_is_stopped() {
    let (code, err, _d) = report_with(&plugin_table("chatty", "big.py", ""));
    assert_eq!(code, 1, "{err}");
    assert!(err.contains("wrote more than 64 MiB on stdout"), "{err}");
}

#[test]
fn an_optional_plugin_that_fails_becomes_a_warning_in_the_report() {
    let (code, err, dir) = report_with(&plugin_table(
        "antenna-model",
        "crash.py",
        "optional = true",
    ));
    assert_eq!(code, 0, "{err}");
    let f: serde_json::Value =
        serde_json::from_slice(&std::fs::read(dir.path().join("out/findings.json")).unwrap())
            .unwrap();
    let w = f["warnings"]
        .as_array()
        .unwrap()
        .iter()
        .find(|w| w["plugin"] == "antenna-model")
        .expect("a warning");
    assert!(
        w["message"]
            .as_str()
            .unwrap()
            .contains("optional external plugin did not run"),
        "{w}"
    );
    let text = pdf_text(&dir.path().join("out/report.pdf"));
    assert!(
        text.contains("optional external plugin did not run"),
        "report lacks the warning"
    );
}

#[test]
fn a_plugin_folder_declares_plugins_for_any_site() {
    let dir = tempfile::tempdir().unwrap();
    starter_site_with(dir.path(), "[plugins.interference]\nsir_target_db = 30.0\n");
    let out = rfsite()
        .arg("report")
        .arg(dir.path())
        .arg("-o")
        .arg(dir.path().join("out"))
        .arg("--plugins")
        .arg(root().join("plugins/external/interference"))
        .output()
        .unwrap();
    let (_, err) = texts(&out);
    assert!(out.status.success(), "{err}");
    let f: serde_json::Value =
        serde_json::from_slice(&std::fs::read(dir.path().join("out/findings.json")).unwrap())
            .unwrap();
    // The site's table (no command) adds its options to the folder's declaration.
    assert_eq!(f["extra"]["interference"]["sir_target_db"], 30.0);
}

#[test]
fn plugins_lists_external_plugins_in_run_order_with_version() {
    let out = run(&["plugins", "examples/interference-demo", "--json"]);
    let (o, err) = texts(&out);
    assert!(out.status.success(), "{err}");
    let v: serde_json::Value = serde_json::from_str(&o).unwrap();
    let ids: Vec<&str> = v
        .as_array()
        .unwrap()
        .iter()
        .map(|p| p["id"].as_str().unwrap())
        .collect();
    let pos = |id: &str| ids.iter().position(|x| *x == id).unwrap();
    assert!(pos("multi-wall") < pos("interference"), "{ids:?}");
    let p = &v[pos("interference")];
    assert_eq!(p["kind"], "external");
    assert_eq!(p["version"], "1.0.0");
    assert!(p["method"]["summary"]
        .as_str()
        .unwrap()
        .contains("signal-to-interference"));
    assert!(p["command"].as_str().unwrap().starts_with("python3 "));
    let text = run(&["plugins", "examples/interference-demo"]);
    assert!(String::from_utf8_lossy(&text.stdout).contains("interference 1.0.0 (external)"));
}

#[test]
fn a_bad_declaration_names_the_table_and_key() {
    let (code, err, _d) = report_with("[plugins.sir]\ncommand = \"python3\"\nargs = \"x.py\"\n");
    assert_eq!(code, 2, "{err}");
    assert!(
        err.contains("[plugins.sir] `args` must be a list of strings"),
        "{err}"
    );
    let (code, err, _d) = report_with("[plugins.multi-wall]\ncommand = \"python3\"\n");
    assert_eq!(code, 2, "{err}");
    assert!(err.contains("`multi-wall` is a built-in plugin"), "{err}");
}
