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

/// Reports a starter site carrying the plugin table, allowing the site's commands; returns
/// (exit code, stderr, site folder; the output is in `out/` of it).
fn report_with(table: &str) -> (i32, String, tempfile::TempDir) {
    report_flags(table, &["--allow-site-commands"])
}

/// As [`report_with`], with these flags instead.
fn report_flags(table: &str, flags: &[&str]) -> (i32, String, tempfile::TempDir) {
    let dir = tempfile::tempdir().unwrap();
    starter_site_with(dir.path(), table);
    let out = rfsite()
        .arg("report")
        .arg(dir.path())
        .arg("-o")
        .arg(dir.path().join("out"))
        .args(flags)
        .output()
        .unwrap();
    let (_, err) = texts(&out);
    assert!(!err.contains("panicked"), "{err}");
    (out.status.code().unwrap_or(-1), err, dir)
}

/// The 1-based line of site.toml in `dir` that starts with `prefix`.
fn line_of(dir: &std::path::Path, prefix: &str) -> usize {
    let text = std::fs::read_to_string(dir.join("site.toml")).unwrap();
    text.lines()
        .position(|l| l.starts_with(prefix))
        .expect("the line is there")
        + 1
}

#[test]
fn interference_plugin_output_appears_in_findings_json_and_the_report() {
    let out_dir = tempfile::tempdir().unwrap();
    let out = rfsite()
        .arg("report")
        .arg(root().join("examples/interference-demo"))
        .arg("-o")
        .arg(out_dir.path())
        .arg("--allow-site-commands")
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
    // Declared in the site file: it runs only with --allow-site-commands.
    assert_eq!(p["declared_in"], "examples/interference-demo/site.toml");
    let line = line_of(&root().join("examples/interference-demo"), "command = ");
    assert_eq!(
        p["declared_at"],
        format!("examples/interference-demo/site.toml:{line}:1")
    );
    assert_eq!(p["origin"], "site");
    assert_eq!(p["allowed"], false);
    let text = run(&["plugins", "examples/interference-demo"]);
    let text = String::from_utf8_lossy(&text.stdout).to_string();
    assert!(text.contains("interference 1.0.0 (external)"), "{text}");
    assert!(
        text.contains(
            "not allowed: a command declared in a site file runs only with --allow-site-commands"
        ),
        "{text}"
    );
    let out = run(&[
        "plugins",
        "examples/interference-demo",
        "--json",
        "--allow-site-commands",
    ]);
    let v: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    let p = v
        .as_array()
        .unwrap()
        .iter()
        .find(|p| p["id"] == "interference")
        .unwrap();
    assert_eq!(p["allowed"], true);
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

// ---- Consent: a site file's command runs only when the user allows it (issue 11) ----

#[test]
fn a_site_command_does_not_run_without_consent_and_the_error_points_at_it() {
    let (code, err, dir) = report_flags(&plugin_table("sneaky", "touch.py", ""), &[]);
    assert_eq!(code, 2, "bad input: {err}");
    let line = line_of(dir.path(), "command = ");
    assert!(err.contains(&format!("site.toml:{line}:1")), "{err}");
    assert!(
        err.contains("runs only with --allow-site-commands"),
        "{err}"
    );
    assert!(
        !dir.path().join("ran.txt").exists(),
        "the site's command must not have started"
    );
    assert!(!dir.path().join("out/report.pdf").exists());
}

#[test]
fn an_optional_site_command_without_consent_is_skipped_with_a_warning() {
    let (code, err, dir) =
        report_flags(&plugin_table("sneaky", "touch.py", "optional = true"), &[]);
    assert_eq!(code, 0, "{err}");
    assert!(!dir.path().join("ran.txt").exists(), "it must not run");
    assert!(err.contains("warning"), "{err}");
    let f: serde_json::Value =
        serde_json::from_slice(&std::fs::read(dir.path().join("out/findings.json")).unwrap())
            .unwrap();
    let w = f["warnings"]
        .as_array()
        .unwrap()
        .iter()
        .find(|w| w["plugin"] == "sneaky")
        .expect("a warning in findings.json");
    assert!(
        w["message"]
            .as_str()
            .unwrap()
            .contains("--allow-site-commands"),
        "{w}"
    );
}

#[test]
fn with_consent_the_site_command_runs() {
    let (code, err, dir) = report_with(&plugin_table("sneaky", "touch.py", ""));
    assert_eq!(code, 0, "{err}");
    assert!(dir.path().join("ran.txt").exists());
}

#[test]
fn check_lists_the_commands_a_report_would_run_and_whether_they_may() {
    let dir = tempfile::tempdir().unwrap();
    starter_site_with(dir.path(), &plugin_table("sneaky", "touch.py", ""));
    let line = line_of(dir.path(), "command = ");
    let out = rfsite().arg("check").arg(dir.path()).output().unwrap();
    let (so, se) = texts(&out);
    assert_eq!(out.status.code(), Some(2), "report would stop: {so}{se}");
    assert!(se.contains(&format!("site.toml:{line}:1")), "{se}");
    assert!(so.contains("sneaky: python3 "), "{so}");
    assert!(so.contains(&format!("site.toml:{line}:1")), "{so}");
    assert!(so.contains("not allowed"), "{so}");
    let out = rfsite()
        .arg("check")
        .arg(dir.path())
        .arg("--allow-site-commands")
        .output()
        .unwrap();
    let (so, se) = texts(&out);
    assert!(out.status.success(), "{so}{se}");
    assert!(so.contains("allowed by --allow-site-commands"), "{so}");
    assert!(
        !dir.path().join("ran.txt").exists(),
        "check never runs a command"
    );
}

#[test]
fn a_plugin_folder_command_runs_without_the_flag_and_check_says_so() {
    let dir = tempfile::tempdir().unwrap();
    starter_site_with(dir.path(), "");
    let out = rfsite()
        .arg("check")
        .arg(dir.path())
        .arg("--plugins")
        .arg(root().join("plugins/external/interference"))
        .output()
        .unwrap();
    let (so, se) = texts(&out);
    assert!(out.status.success(), "{so}{se}");
    assert!(so.contains("interference.toml"), "{so}");
    assert!(
        so.contains("allowed: declared in a --plugins folder"),
        "{so}"
    );
}

// ---- Declarations: the time limit (issue 11) ----

#[test]
fn an_absurd_time_limit_is_a_located_error_not_a_panic() {
    for bad in ["1e300", "inf", "nan", "0", "-3", "86401", "\"60\""] {
        let (code, err, dir) = report_with(&plugin_table(
            "slow",
            "sleep.py",
            &format!("timeout_s = {bad}"),
        ));
        assert_eq!(code, 2, "timeout_s = {bad}: {err}");
        let line = line_of(dir.path(), "timeout_s = ");
        // nan and inf are refused by the loader's scan for non-finite numbers, at the
        // number; the others by the declaration check, at the key.
        let at_key = err.contains(&format!("site.toml:{line}:1: [plugins.slow] `timeout_s`"));
        let at_number = err.contains(&format!(
            "site.toml:{line}:13: error: `plugins.slow.timeout_s` is not a finite number"
        ));
        assert!(at_key || at_number, "timeout_s = {bad}: {err}");
        assert!(
            at_number || err.contains("at most 86400"),
            "timeout_s = {bad}: {err}"
        );
    }
}

// ---- The process: grandchildren, process group, stderr (issue 11) ----

/// Whether process `pid` is gone (or a zombie: killed, not yet reaped by its new parent),
/// waiting at most 10 s for a SIGKILL already sent to take effect.
fn gone(pid: &str) -> bool {
    let t0 = Instant::now();
    while t0.elapsed() < Duration::from_secs(10) {
        match std::fs::read_to_string(format!("/proc/{pid}/stat")) {
            Err(_) => return true,
            Ok(s)
                if s.rsplit(')')
                    .next()
                    .unwrap_or("")
                    .trim_start()
                    .starts_with('Z') =>
            {
                return true
            }
            Ok(_) => std::thread::sleep(Duration::from_millis(50)),
        }
    }
    false
}

#[test]
fn a_grandchild_holding_stdout_does_not_spoil_a_complete_answer() {
    let (code, err, dir) = report_with(&plugin_table("forks", "grandchild.py", "timeout_s = 50"));
    assert_eq!(code, 0, "{err}");
    let f: serde_json::Value =
        serde_json::from_slice(&std::fs::read(dir.path().join("out/findings.json")).unwrap())
            .unwrap();
    assert!(f["findings"]
        .as_array()
        .unwrap()
        .iter()
        .any(|x| x["id"] == "answered"));
    let pid = std::fs::read_to_string(dir.path().join("grandchild.pid")).unwrap();
    assert!(gone(pid.trim()), "the grandchild {pid} outlived the plugin");
}

#[test]
fn a_time_limit_kill_takes_the_whole_process_group() {
    let (code, err, dir) = report_with(&plugin_table("orphans", "orphan.py", "timeout_s = 2"));
    assert_eq!(code, 1, "{err}");
    assert!(
        err.contains("did not answer within its time limit"),
        "{err}"
    );
    let pid = std::fs::read_to_string(dir.path().join("grandchild.pid")).unwrap();
    assert!(gone(pid.trim()), "the grandchild {pid} survived the kill");
}

#[test]
fn a_flood_on_stderr_is_capped_and_said_to_be_truncated() {
    let (code, err, _d) = report_with(&format!(
        "[plugins.flood]\ncommand = \"python3\"\nargs = [{:?}, \"ok\"]\n",
        external_fixture("flood.py")
    ));
    assert_eq!(code, 0, "{}", &err[..err.len().min(2000)]);
    assert!(
        err.len() < 256 << 10,
        "8 MiB of plugin stderr reached the log: {} bytes",
        err.len()
    );
    assert!(
        err.contains("flood [new-site]: [stderr truncated"),
        "{}",
        &err[err.len().saturating_sub(2000)..]
    );
    let (code, err, _d) = report_with(&format!(
        "[plugins.flood]\ncommand = \"python3\"\nargs = [{:?}, \"fail\"]\n",
        external_fixture("flood.py")
    ));
    assert_eq!(code, 1);
    assert!(err.len() < 256 << 10, "{} bytes", err.len());
    assert!(
        err.contains("failed with exit status 4"),
        "{}",
        &err[err.len().saturating_sub(2000)..]
    );
    assert!(
        err.contains("final words before the end"),
        "the tail is kept: {}",
        &err[err.len().saturating_sub(2000)..]
    );
}

// ---- The answer: size and layers (issue 11) ----

#[test]
fn a_huge_free_form_extra_is_refused_by_count() {
    let (code, err, _d) = report_with(&format!(
        "[plugins.bloat]\ncommand = \"python3\"\nargs = [{:?}, \"300000\"]\n",
        external_fixture("extra.py")
    ));
    assert_eq!(code, 1, "{err}");
    assert!(
        err.contains("`output.extra` holds more than 250000 JSON values"),
        "{err}"
    );
    let (code, err, _d) = report_with(&format!(
        "[plugins.bloat]\ncommand = \"python3\"\nargs = [{:?}, \"1000\"]\n",
        external_fixture("extra.py")
    ));
    assert_eq!(code, 0, "a small extra is fine: {err}");
}

#[test]
fn degenerate_layers_are_protocol_errors_naming_the_field() {
    let cases = [
        ("nx0", "output.layers[0].grid.nx"),
        ("step0", "output.layers[0].grid.step_m"),
        ("step-neg", "output.layers[0].grid.step_m"),
        ("levels", "output.layers[0].level_dbm"),
        ("server", "output.layers[0].best_server[1]"),
        ("huge", "output.layers[0].grid: 100000 x 100000 points"),
        (
            "overflow",
            "output.layers[0].grid: 9223372036854775808 x 4 points",
        ),
    ];
    for (kind, field) in cases {
        let (code, err, _d) = report_with(&format!(
            "[plugins.grid]\ncommand = \"python3\"\nargs = [{:?}, {kind:?}]\n",
            external_fixture("layers.py")
        ));
        assert_eq!(code, 1, "{kind}: {err}");
        assert!(err.contains("breaks `rfsite-plugin/1`"), "{kind}: {err}");
        assert!(err.contains(field), "{kind}: {err}");
    }
    let (code, err, _d) = report_with(&format!(
        "[plugins.grid]\ncommand = \"python3\"\nargs = [{:?}, \"ok\"]\n",
        external_fixture("layers.py")
    ));
    assert_eq!(code, 0, "a correct layer is accepted: {err}");
}

#[test]
fn portfolio_runs_site_commands_only_with_consent() {
    let tmp = tempfile::tempdir().unwrap();
    let site = tmp.path().join("sites/a");
    std::fs::create_dir_all(&site).unwrap();
    starter_site_with(&site, &plugin_table("sneaky", "touch.py", ""));
    let run_portfolio = |flags: &[&str]| {
        let out = rfsite()
            .arg("portfolio")
            .arg(tmp.path().join("sites"))
            .arg("-o")
            .arg(tmp.path().join("out"))
            .arg("--force")
            .args(flags)
            .output()
            .unwrap();
        let p: serde_json::Value =
            serde_json::from_slice(&std::fs::read(tmp.path().join("out/portfolio.json")).unwrap())
                .unwrap();
        (out, p["sites"][0].clone())
    };
    let (out, s) = run_portfolio(&[]);
    let (_, err) = texts(&out);
    assert_eq!(s["status"], "bad-input", "{s}\n{err}");
    assert!(
        s["problems"][0]
            .as_str()
            .unwrap()
            .contains("--allow-site-commands"),
        "{s}"
    );
    assert!(!site.join("ran.txt").exists(), "it must not run");
    let (out, s) = run_portfolio(&["--allow-site-commands"]);
    let (_, err) = texts(&out);
    assert_eq!(s["status"], "ok", "{s}\n{err}");
    assert!(site.join("ran.txt").exists());
}
