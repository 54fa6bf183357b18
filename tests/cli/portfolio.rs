//! `rfsite portfolio`: every site of a folder, one summary; shards merge to the same
//! summary; unchanged sites are skipped; broken sites are named and never stop the others.

use std::path::Path;

use crate::cli::util::{copy_dir, pdf_text, rfsite, root, texts};

const GOOD: [&str; 4] = [
    "brindle-tower",
    "fenwick-clinic",
    "harrow-lane-office",
    "saltmarsh-depot",
];

fn portfolio(dir: &Path, out: &Path, extra: &[&str]) -> (i32, String, String) {
    let o = rfsite()
        .current_dir(root())
        .arg("portfolio")
        .arg(dir)
        .arg("-o")
        .arg(out)
        .args(extra)
        .output()
        .unwrap();
    let (so, se) = texts(&o);
    assert!(!se.contains("panicked"), "{se}");
    (o.status.code().unwrap_or(-1), so, se)
}

fn json(p: &Path) -> serde_json::Value {
    serde_json::from_slice(&std::fs::read(p).unwrap_or_else(|e| panic!("{}: {e}", p.display())))
        .unwrap()
}

fn sorted_sites(p: &serde_json::Value) -> Vec<serde_json::Value> {
    let mut v = p["sites"].as_array().unwrap().clone();
    v.sort_by(|a, b| a["path"].as_str().cmp(&b["path"].as_str()));
    v
}

#[test]
fn demo_portfolio_writes_every_good_report_and_names_the_broken_site() {
    let out = tempfile::tempdir().unwrap();
    let (code, so, se) = portfolio(
        Path::new("examples/portfolio"),
        out.path(),
        &["--jobs", "2"],
    );
    assert_eq!(code, 2, "bad input in one site gives exit 2\n{so}\n{se}");
    for id in GOOD {
        let d = out.path().join(id);
        assert!(d.join("report.pdf").is_file(), "{id} has no report");
        assert_eq!(json(&d.join("findings.json"))["site"]["id"], id);
        assert!(
            d.join("figures").read_dir().unwrap().count() >= 1,
            "{id} has no figures"
        );
        assert!(d.join(".rfsite-output").is_file());
    }
    assert!(!out.path().join("larkspur-annex").exists());
    let where_ = "examples/portfolio/larkspur-annex/site.toml:21:12: unknown material `plasterbord-partition`";
    assert!(se.contains(where_), "{se}");
    let p = json(&out.path().join("portfolio.json"));
    assert_eq!(p["schema"], "rfsite-portfolio/2");
    assert_eq!(p["totals"]["sites"], 5);
    assert_eq!(p["totals"]["bad_input"], 1);
    let broken = p["sites"]
        .as_array()
        .unwrap()
        .iter()
        .find(|s| s["path"] == "larkspur-annex")
        .unwrap();
    assert_eq!(broken["status"], "bad-input");
    // The problem keeps the hint line `check` prints.
    let problem = broken["problems"][0].as_str().unwrap();
    assert!(
        problem.starts_with(where_)
            && problem.contains("\n  = hint: did you mean `plasterboard-partition`"),
        "{problem}"
    );
    // Verdicts per site and service, and the ranking (the demo is built to fail here).
    let clinic = p["sites"]
        .as_array()
        .unwrap()
        .iter()
        .find(|s| s["id"] == "fenwick-clinic")
        .unwrap();
    let ps = clinic["services"]
        .as_array()
        .unwrap()
        .iter()
        .find(|s| s["id"] == "ps700")
        .unwrap();
    assert_eq!(ps["pass"], false);
    assert_eq!(ps["worst_floor"], "L1");
    // Life-safety floors first (the IoT gap needs more margin but ranks after them), then
    // the largest margin needed.
    let rank = p["shortfall_ranking"].as_array().unwrap();
    assert!(rank.len() >= 3);
    assert_eq!(rank[0]["service_name"], "Public-safety 700 MHz");
    assert_eq!(rank[0]["floor_name"], "First floor");
    assert!(rank.windows(2).all(|w| {
        let key =
            |r: &serde_json::Value| (r["life_safety"].as_bool(), r["margin_needed_db"].as_f64());
        key(&w[0]) >= key(&w[1])
    }));
    assert!(rank.iter().any(|r| r["service"] == "iot900"
        && r["margin_needed_db"].as_f64() > rank[0]["margin_needed_db"].as_f64()));
    assert!(rank
        .iter()
        .all(|r| !r["reason"].as_str().unwrap().is_empty()));
    assert_eq!(
        p["date"], "2026-10-09",
        "the latest of the sites' report dates"
    );
    assert_eq!(p["meta"]["owner"], "Thornwick Asset Services (invented)");
    let csv = std::fs::read_to_string(out.path().join("portfolio.csv")).unwrap();
    assert!(
        csv.starts_with("path,site_id,site_name,client,report_date,status,site_verdict,service,service_name,life_safety,"),
        "{csv}"
    );
    assert!(
        csv.lines().any(|l| l.starts_with("larkspur-annex,")
            && l.contains("bad-input")
            && l.contains("site.toml:21:12")),
        "{csv}"
    );
    assert!(
        csv.lines().any(|l| l.starts_with(
            "fenwick-clinic,fenwick-clinic,Fenwick Street Clinic,Ouse Valley Health,2026-10-02,ok,fail,ps700,Public-safety 700 MHz,true,fail,0.95,0.99,L1,First floor,"
        )),
        "{csv}"
    );
    per_service_counts_agree_with_each_sites_findings(out.path(), &p, &csv);
    let text = pdf_text(&out.path().join("portfolio.pdf"));
    for s in [
        "Marbury district portfolio",
        "For Thornwick Asset Services (invented)",
        "dated 2026-10-09",
        "Verdict per site and service",
        "Shortfall ranking",
        "Sites that did not run",
        "larkspur-annex",
        "site.toml:21:12",
        "Fenwick Street Clinic",
        "Brindle Tower",
        "FAIL",
        "PASS",
    ] {
        assert!(text.contains(s), "summary PDF lacks `{s}`");
    }
}

/// Counts by severity of the findings about `service` (None: about no service) in a
/// site's findings.json.
fn counted(findings: &serde_json::Value, service: Option<&str>) -> [usize; 3] {
    let mut c = [0; 3];
    for f in findings["findings"].as_array().unwrap() {
        if f["service"].as_str() != service {
            continue;
        }
        match f["severity"].as_str() {
            Some("critical") => c[0] += 1,
            Some("major") => c[1] += 1,
            Some("minor") => c[2] += 1,
            _ => {}
        }
    }
    c
}

/// portfolio.json's and portfolio.csv's per-service finding counts, against each site's
/// own findings.json.
fn per_service_counts_agree_with_each_sites_findings(out: &Path, p: &serde_json::Value, csv: &str) {
    let mut rows = csv::Reader::from_reader(csv.as_bytes());
    let head = rows.headers().unwrap().clone();
    let col = |name: &str| head.iter().position(|h| h == name).unwrap();
    let records: Vec<csv::StringRecord> = rows.records().map(Result::unwrap).collect();
    let mut checked = 0;
    for site in p["sites"]
        .as_array()
        .unwrap()
        .iter()
        .filter(|s| s["status"] == "ok")
    {
        let id = site["id"].as_str().unwrap();
        let f = json(&out.join(id).join("findings.json"));
        for sv in site["services"].as_array().unwrap() {
            let sid = sv["id"].as_str().unwrap();
            let want = counted(&f, Some(sid));
            let c = &sv["findings"];
            let got =
                [&c["critical"], &c["major"], &c["minor"]].map(|v| v.as_u64().unwrap() as usize);
            assert_eq!(got, want, "{id} {sid} in portfolio.json");
            let row = records
                .iter()
                .find(|r| &r[col("site_id")] == id && &r[col("service")] == sid)
                .unwrap_or_else(|| panic!("no CSV row for {id} {sid}"));
            let csv_counts =
                ["critical", "major", "minor"].map(|k| row[col(k)].parse::<usize>().unwrap());
            assert_eq!(csv_counts, want, "{id} {sid} in portfolio.csv");
            checked += 1;
        }
        let wide = counted(&f, None);
        let wide_row = records
            .iter()
            .find(|r| &r[col("site_id")] == id && r[col("service")].is_empty());
        match wide_row {
            Some(r) => assert_eq!(
                ["critical", "major", "minor"].map(|k| r[col(k)].parse::<usize>().unwrap()),
                wide
            ),
            None => assert_eq!(
                wide,
                [0, 0, 0],
                "{id}: site-wide findings need their own row"
            ),
        }
    }
    assert_eq!(checked, 6, "the demo's six site services");
}

#[test]
fn shards_merged_give_the_summary_of_one_run() {
    let whole = tempfile::tempdir().unwrap();
    let (code, _, se) = portfolio(Path::new("examples/portfolio"), whole.path(), &[]);
    assert_eq!(code, 2, "{se}");
    let shards: Vec<tempfile::TempDir> = (0..3).map(|_| tempfile::tempdir().unwrap()).collect();
    let mut seen = 0;
    for (k, d) in shards.iter().enumerate() {
        let (code, so, se) = portfolio(
            Path::new("examples/portfolio"),
            d.path(),
            &["--shard", &format!("{}/3", k + 1), "--jobs", "1"],
        );
        assert!(code == 0 || code == 2, "{so}{se}");
        let p = json(&d.path().join("portfolio.json"));
        assert_eq!(p["shard"], format!("{}/3", k + 1));
        seen += p["sites"].as_array().unwrap().len();
    }
    assert_eq!(seen, 5, "every site runs in exactly one shard");
    let merged = tempfile::tempdir().unwrap();
    let o = rfsite()
        .arg("portfolio")
        .arg("merge")
        .args(shards.iter().map(|d| d.path()))
        .arg("-o")
        .arg(merged.path())
        .output()
        .unwrap();
    let (so, se) = texts(&o);
    assert_eq!(
        o.status.code(),
        Some(2),
        "the merge keeps the broken site's exit code\n{so}{se}"
    );
    let a = json(&whole.path().join("portfolio.json"));
    let m = json(&merged.path().join("portfolio.json"));
    assert_eq!(sorted_sites(&a), sorted_sites(&m));
    assert_eq!(a["totals"], m["totals"]);
    assert_eq!(a["shortfall_ranking"], m["shortfall_ranking"]);
    assert_eq!(
        std::fs::read(whole.path().join("portfolio.csv")).unwrap(),
        std::fs::read(merged.path().join("portfolio.csv")).unwrap()
    );
    // The merged folder is a whole portfolio output: the site folders are copied into it.
    for id in GOOD {
        assert!(
            merged.path().join(id).join("report.pdf").is_file(),
            "{id} not copied"
        );
    }
    assert!(merged.path().join("portfolio.pdf").is_file());
}

#[test]
fn a_second_run_skips_unchanged_sites_unless_forced() {
    let tmp = tempfile::tempdir().unwrap();
    let dir = tmp.path().join("sites");
    copy_dir(
        &root().join("examples/portfolio/harrow-lane-office"),
        &dir.join("office"),
    );
    copy_dir(
        &root().join("examples/portfolio/saltmarsh-depot"),
        &dir.join("depot"),
    );
    let out = tmp.path().join("out-pf");
    let (code, so, se) = portfolio(&dir, &out, &[]);
    assert_eq!(code, 0, "{so}{se}");
    assert!(so.contains("0 unchanged and kept"), "{so}");
    let first = std::fs::read(out.join("portfolio.json")).unwrap();
    let (code, so, se) = portfolio(&dir, &out, &[]);
    assert_eq!(code, 0, "{se}");
    assert!(so.contains("2 unchanged and kept"), "{so}");
    assert!(se.contains("unchanged office (harrow-lane-office)"), "{se}");
    assert_eq!(
        first,
        std::fs::read(out.join("portfolio.json")).unwrap(),
        "a skipped site contributes what it did before"
    );
    // An edited input runs again; the other site stays skipped.
    let f = dir.join("office/site.toml");
    let t = std::fs::read_to_string(&f).unwrap();
    std::fs::write(&f, t.replace("power_dbm = 12.0", "power_dbm = 10.0")).unwrap();
    let (_, so, se) = portfolio(&dir, &out, &[]);
    assert!(so.contains("1 unchanged and kept"), "{so}");
    assert!(se.contains("done      office (harrow-lane-office)"), "{se}");
    let (_, so, _) = portfolio(&dir, &out, &["--force"]);
    assert!(so.contains("0 unchanged and kept"), "{so}");
}

#[cfg(unix)]
#[test]
fn discovery_skips_hidden_output_folders_and_survives_symlink_loops() {
    let tmp = tempfile::tempdir().unwrap();
    let dir = tmp.path().join("sites");
    let office = root().join("examples/portfolio/harrow-lane-office");
    copy_dir(&office, &dir.join("a/office"));
    copy_dir(&office, &dir.join(".hidden/office"));
    copy_dir(&office, &dir.join("out/office"));
    copy_dir(&office, &dir.join("old-report"));
    std::fs::write(dir.join("old-report/findings.json"), "{}").unwrap();
    std::os::unix::fs::symlink(&dir, dir.join("a/loop")).unwrap();
    let out = tmp.path().join("result");
    let (code, so, se) = portfolio(&dir, &out, &[]);
    assert_eq!(code, 0, "{so}{se}");
    let p = json(&out.join("portfolio.json"));
    let paths: Vec<&str> = p["sites"]
        .as_array()
        .unwrap()
        .iter()
        .map(|s| s["path"].as_str().unwrap())
        .collect();
    assert_eq!(paths, vec!["a/office"]);
    // Its own output below DIR is never taken for a site either.
    let (code, _, se) = portfolio(&dir, &dir.join("results"), &[]);
    assert_eq!(code, 0, "{se}");
    assert_eq!(
        json(&dir.join("results/portfolio.json"))["totals"]["sites"],
        1
    );
    let (_, _, _) = portfolio(&dir, &dir.join("results"), &[]);
    assert_eq!(
        json(&dir.join("results/portfolio.json"))["totals"]["sites"],
        1
    );
}

#[test]
fn two_sites_with_one_id_do_not_share_an_output_folder() {
    let tmp = tempfile::tempdir().unwrap();
    let dir = tmp.path().join("sites");
    let office = root().join("examples/portfolio/harrow-lane-office");
    copy_dir(&office, &dir.join("a"));
    copy_dir(&office, &dir.join("b"));
    let (code, so, se) = portfolio(&dir, &tmp.path().join("o"), &[]);
    assert_eq!(code, 2, "{so}{se}");
    assert!(
        se.contains("site id `harrow-lane-office` is also the id of `a`"),
        "{se}"
    );
}

#[test]
fn a_failing_external_plugin_fails_only_its_site() {
    let tmp = tempfile::tempdir().unwrap();
    let dir = tmp.path().join("sites");
    copy_dir(
        &root().join("examples/portfolio/harrow-lane-office"),
        &dir.join("good"),
    );
    let bad = dir.join("crashy");
    std::fs::create_dir_all(&bad).unwrap();
    crate::cli::util::starter_site_with(
        &bad,
        &format!(
            "[plugins.crashy]\ncommand = \"python3\"\nargs = [{:?}]\n",
            crate::cli::util::external_fixture("crash.py")
        ),
    );
    let out = tmp.path().join("o");
    let (code, so, se) = portfolio(&dir, &out, &["--allow-site-commands"]);
    assert_eq!(
        code, 1,
        "a run failure (not bad input) gives exit 1\n{so}{se}"
    );
    let p = json(&out.join("portfolio.json"));
    let c = p["sites"]
        .as_array()
        .unwrap()
        .iter()
        .find(|s| s["path"] == "crashy")
        .unwrap();
    assert_eq!(c["status"], "failed");
    assert!(
        c["problems"][0]
            .as_str()
            .unwrap()
            .contains("plugin `crashy` failed"),
        "{c}"
    );
    assert!(out.join("harrow-lane-office/report.pdf").is_file());
}

/// Issue 11 item 5: each site runs in its own child process, so a crash or a hang of one
/// site is that site's failure and the others complete.
fn with_good_and(bad_extra: &str) -> (tempfile::TempDir, std::path::PathBuf) {
    let tmp = tempfile::tempdir().unwrap();
    let dir = tmp.path().join("sites");
    copy_dir(
        &root().join("examples/portfolio/harrow-lane-office"),
        &dir.join("good"),
    );
    let bad = dir.join("bad");
    std::fs::create_dir_all(&bad).unwrap();
    crate::cli::util::starter_site_with(&bad, bad_extra);
    (tmp, dir)
}

fn bad_entry(out: &Path) -> serde_json::Value {
    let p = json(&out.join("portfolio.json"));
    p["sites"]
        .as_array()
        .unwrap()
        .iter()
        .find(|s| s["path"] == "bad")
        .unwrap()
        .clone()
}

#[test]
fn an_aborting_site_fails_alone() {
    let (tmp, dir) = with_good_and("");
    let out = tmp.path().join("o");
    let o = rfsite()
        .current_dir(root())
        .env("RFSITE_TEST_ABORT_SITE", "bad")
        .args(["portfolio"])
        .arg(&dir)
        .arg("-o")
        .arg(&out)
        .output()
        .unwrap();
    let (so, se) = texts(&o);
    assert_eq!(o.status.code(), Some(1), "{so}{se}");
    let b = bad_entry(&out);
    assert_eq!(b["status"], "failed");
    assert!(
        b["problems"][0].as_str().unwrap().contains("aborted"),
        "{b}"
    );
    assert!(out.join("harrow-lane-office/report.pdf").is_file());
}

#[test]
fn a_hanging_site_is_stopped_at_the_site_time_limit() {
    let (tmp, dir) = with_good_and(&format!(
        "[plugins.slow]\ncommand = \"python3\"\nargs = [{:?}]\ntimeout_s = 120\n",
        crate::cli::util::external_fixture("sleep.py")
    ));
    let out = tmp.path().join("o");
    let t0 = std::time::Instant::now();
    let (code, so, se) = portfolio(
        &dir,
        &out,
        &["--site-timeout-s", "20", "--allow-site-commands"],
    );
    assert_eq!(code, 1, "{so}{se}");
    // The hang would otherwise last the plugin's 60 s sleep.
    assert!(
        t0.elapsed().as_secs() < 50,
        "the hanging site was not stopped"
    );
    let b = bad_entry(&out);
    assert!(
        b["problems"][0]
            .as_str()
            .unwrap()
            .contains("per-site time limit of 20 s"),
        "{b}"
    );
    assert!(out.join("harrow-lane-office/report.pdf").is_file());
}

#[test]
fn a_misspelt_portfolio_toml_key_stops_the_run_at_its_line() {
    let dir = tempfile::tempdir().unwrap();
    copy_dir(
        &root().join("examples/portfolio/harrow-lane-office"),
        &dir.path().join("office"),
    );
    std::fs::write(
        dir.path().join("portfolio.toml"),
        "[portfolio]\nname = \"Test\"\nowenr = \"Someone\"\n",
    )
    .unwrap();
    let out = tempfile::tempdir().unwrap();
    let (code, _so, se) = portfolio(dir.path(), out.path(), &[]);
    assert_eq!(code, 2, "{se}");
    assert!(
        se.contains("portfolio.toml:3:1: unknown field `owenr`"),
        "{se}"
    );
    assert!(
        se.contains("= hint: portfolio.toml holds one table"),
        "{se}"
    );
    assert!(!out.path().join("portfolio.json").exists());
}
