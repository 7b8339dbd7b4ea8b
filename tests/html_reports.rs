//! Every command that writes outputs writes one self-contained `report.html`; each is opened in headless Chromium
//! and must show no console message (errors, refused requests), request nothing (no resource entry at all), and
//! keep every `<text>` of every SVG inside its SVG's box as the browser measures them. A screenshot of each page
//! is written under `target/tmp/html-reports/` to look at.
//!
//! A control page with a cut-off label, a script error and an outside request checks that each check can fail.
//! Chromium is Debian's `chromium` package (`.ci/run` installs it); `DRYFRONT_CHROMIUM` names another binary.
//! Where none is found the test prints why and passes without checking.
use std::path::{Path, PathBuf};
use std::process::{Command, Stdio};
use std::time::{Duration, Instant};

fn bin() -> Command {
    Command::new(env!("CARGO_BIN_EXE_dryfront"))
}

fn root() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
}

fn shots() -> PathBuf {
    let d = PathBuf::from(env!("CARGO_TARGET_TMPDIR")).join("html-reports");
    std::fs::create_dir_all(&d).unwrap();
    d
}

fn chromium() -> Option<PathBuf> {
    if let Some(p) = std::env::var_os("DRYFRONT_CHROMIUM") {
        return Some(PathBuf::from(p));
    }
    ["/usr/bin/chromium", "/usr/bin/chromium-browser"]
        .iter()
        .map(PathBuf::from)
        .find(|p| p.exists())
}

/// The flags that keep Chromium off the network and out of the user's profile.
fn browser(chrome: &Path, profile: &Path) -> Command {
    let mut c = Command::new(chrome);
    c.args([
        "--headless",
        "--no-sandbox",
        "--disable-gpu",
        "--disable-quic",
        "--no-first-run",
        "--disable-background-networking",
        "--disable-component-update",
        "--disable-sync",
        "--hide-scrollbars",
        "--enable-logging=stderr",
        "--v=0",
    ])
    .arg(format!("--user-data-dir={}", profile.display()))
    .stdin(Stdio::null());
    c
}

/// Run a browser command with a deadline; its stdout and stderr.
fn run_browser(mut c: Command) -> (String, String) {
    let dir = tempfile::tempdir().unwrap();
    let (out, err) = (dir.path().join("out"), dir.path().join("err"));
    let mut child = c
        .stdout(std::fs::File::create(&out).unwrap())
        .stderr(std::fs::File::create(&err).unwrap())
        .spawn()
        .expect("start chromium");
    let deadline = Instant::now() + Duration::from_secs(120);
    loop {
        if child.try_wait().unwrap().is_some() {
            break;
        }
        if Instant::now() > deadline {
            let _ = child.kill();
            panic!("chromium did not finish within 120 s");
        }
        std::thread::sleep(Duration::from_millis(50));
    }
    (
        std::fs::read_to_string(out).unwrap_or_default(),
        std::fs::read_to_string(err).unwrap_or_default(),
    )
}

/// Measures the page after it is laid out and writes the results into the DOM as JSON.
const MEASURE: &str = r#"<script>(function(){
var out={svgs:0,texts:0,outside:[],resources:[],height:0};
document.querySelectorAll('svg').forEach(function(s,si){
  if(s.parentElement&&s.parentElement.closest('svg'))return;
  out.svgs++;var b=s.getBoundingClientRect();
  s.querySelectorAll('text').forEach(function(t){
    out.texts++;var r=t.getBoundingClientRect();
    if(r.left<b.left-0.5||r.right>b.right+0.5||r.top<b.top-0.5||r.bottom>b.bottom+0.5)
      out.outside.push({svg:si,text:t.textContent.slice(0,80),text_box:[r.left,r.top,r.right,r.bottom],svg_box:[b.left,b.top,b.right,b.bottom]});
  });
});
out.resources=performance.getEntriesByType('resource').map(function(e){return e.name;});
document.querySelectorAll('[src],[href],[srcset]').forEach(function(e){
  out.resources.push(e.getAttribute('src')||e.getAttribute('href')||e.getAttribute('srcset'));});
out.height=document.documentElement.scrollHeight;
var p=document.createElement('pre');p.id='dryfront-check';p.textContent=JSON.stringify(out);document.body.appendChild(p);
})();</script>"#;

fn unescape(s: &str) -> String {
    s.replace("&lt;", "<")
        .replace("&gt;", ">")
        .replace("&quot;", "\"")
        .replace("&amp;", "&")
}

/// Open `html` (a copy with the measuring script appended) in Chromium: the measurements and the console lines.
fn measure(chrome: &Path, name: &str, html: &Path) -> (serde_json::Value, Vec<String>) {
    let text = std::fs::read_to_string(html).unwrap();
    let probe = html.with_file_name("report.check.html");
    std::fs::write(
        &probe,
        text.replace("</body>", &format!("{MEASURE}</body>")),
    )
    .unwrap();
    let profile = tempfile::tempdir().unwrap();
    let mut c = browser(chrome, profile.path());
    c.args(["--window-size=1280,900", "--dump-dom"])
        .arg(format!("file://{}", probe.display()));
    let (dom, log) = run_browser(c);
    let console = log
        .lines()
        .filter(|l| l.contains(":CONSOLE"))
        .map(String::from)
        .collect();
    let json = dom
        .split("<pre id=\"dryfront-check\">")
        .nth(1)
        .and_then(|s| s.split("</pre>").next())
        .unwrap_or_else(|| panic!("{name}: no measurements in the page; browser log:\n{log}"));
    (serde_json::from_str(&unescape(json)).unwrap(), console)
}

/// Open `html` in Chromium, check it, and write its screenshot as `name.png`; the number of SVG pictures.
fn check_in_browser(chrome: &Path, name: &str, html: &Path) -> usize {
    let text = std::fs::read_to_string(html).unwrap();
    for banned in ["src=", "href=", "url(", "@import"] {
        assert!(
            !text.contains(banned),
            "{name}: the page refers out ({banned})"
        );
    }
    assert!(
        text.contains("SHA-256") && text.contains("Cautions"),
        "{name}"
    );
    let (m, console) = measure(chrome, name, html);
    assert!(console.is_empty(), "{name}: console messages: {console:#?}");
    assert_eq!(m["resources"], serde_json::json!([]), "{name}: requests");
    assert_eq!(
        m["outside"],
        serde_json::json!([]),
        "{name}: text outside its picture"
    );
    let svgs = m["svgs"].as_u64().unwrap() as usize;
    assert!(svgs == 0 || m["texts"].as_u64().unwrap() > 0, "{name}");
    let height = m["height"].as_f64().unwrap().clamp(600.0, 16000.0);
    let png = shots().join(format!("{name}.png"));
    let _ = std::fs::remove_file(&png);
    let profile = tempfile::tempdir().unwrap();
    let mut c = browser(chrome, profile.path());
    c.arg(format!("--window-size=1280,{height:.0}"))
        .arg(format!("--screenshot={}", png.display()))
        .arg(format!("file://{}", html.display()));
    let _ = run_browser(c);
    let size = std::fs::metadata(&png).map(|m| m.len()).unwrap_or(0);
    assert!(
        size > 10_000,
        "{name}: screenshot {} has {size} bytes",
        png.display()
    );
    svgs
}

/// The checks can fail: a page with a label past its picture's edge, a script error and an image it tries to
/// fetch is caught on all three counts.
fn control_is_caught(chrome: &Path) {
    let dir = tempfile::tempdir().unwrap();
    let html = dir.path().join("report.html");
    std::fs::write(
        &html,
        "<!DOCTYPE html><html><head><meta charset=\"utf-8\"></head><body>\
         <svg xmlns=\"http://www.w3.org/2000/svg\" width=\"100\" height=\"40\">\
         <text x=\"80\" y=\"20\">cut off here</text></svg><img alt=\"\" src=\"http://192.0.2.1/x.png\">\
         <script>undefinedFunction();</script></body></html>",
    )
    .unwrap();
    let (m, console) = measure(chrome, "control", &html);
    assert_eq!(m["outside"].as_array().map(Vec::len), Some(1), "{m}");
    // The image is found as an element that would fetch; its request shows in the timing entries only once it
    // has failed, which may be after the measuring script ran.
    assert!(
        m["resources"]
            .as_array()
            .is_some_and(|r| r.iter().any(|x| x == "http://192.0.2.1/x.png")),
        "{m}"
    );
    assert!(
        !console.is_empty(),
        "the script error reached no console line"
    );
}

/// A buying point of 30 dryers (the Wrenfield file's first dryer repeated), for a readable 600-load season.
fn big_point(dir: &Path) -> PathBuf {
    let p = root().join("models/buying-points/wrenfield.json");
    let mut v: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(p).unwrap()).unwrap();
    let first = v["dryers"][0].clone();
    v["dryers"] = (1..=30)
        .map(|k| {
            let mut d = first.clone();
            d["id"] = format!("D{k:02}").into();
            d
        })
        .collect();
    let out = dir.join("point-30.json");
    std::fs::write(&out, v.to_string()).unwrap();
    out
}

/// The demo scenario on a small grid, weather path made absolute.
fn small_scenario(dir: &Path) -> PathBuf {
    let text = std::fs::read_to_string(root().join("models/scenarios/demo-load.json")).unwrap();
    let mut v: serde_json::Value = serde_json::from_str(&text).unwrap();
    v["weather"] = root()
        .join("weather-samples/cypress-neck-2026/season_000.csv")
        .to_string_lossy()
        .into_owned()
        .into();
    v["grid"] = serde_json::json!({"nx": 6, "ny": 3, "nz": 8});
    let p = dir.join("scenario.json");
    std::fs::write(&p, v.to_string()).unwrap();
    p
}

fn run_ok(args: &[&str], out: &Path) {
    let o = bin().args(args).arg("--out").arg(out).output().unwrap();
    assert!(
        o.status.success(),
        "{args:?}: {}",
        String::from_utf8_lossy(&o.stderr)
    );
}

#[test]
fn every_report_opens_cleanly_in_chromium() {
    let Some(chrome) = chromium() else {
        eprintln!(
            "html_reports: skipped, no Chromium found (install Debian's chromium package or set DRYFRONT_CHROMIUM)"
        );
        return;
    };
    control_is_caught(&chrome);
    let dir = tempfile::tempdir().unwrap();
    let sc = small_scenario(dir.path());
    let big = big_point(dir.path());
    let big = big.to_str().unwrap();
    let sc = sc.to_str().unwrap();
    let bp = root().join("models/buying-points/wrenfield.json");
    let bp = bp.to_str().unwrap();
    let at = |f: &str| root().join(f).to_string_lossy().into_owned();
    let (status, board) = (
        at("examples/at-the-dryer/status-bf06.json"),
        at("examples/at-the-dryer/board.json"),
    );
    let (load23, samples23) = (
        at("examples/calibration/bf-load-23.json"),
        at("examples/calibration/bf-load-23-samples.csv"),
    );
    let survey = at("survey-samples/trailer-6m-bramble-fork.csv");
    let cases: Vec<(&str, Vec<&str>, usize)> = vec![
        ("dry", vec!["dry", "--scenario", sc], 5),
        ("dry-us", vec!["dry", "--scenario", sc, "--units", "us"], 5),
        (
            "compare",
            vec![
                "compare",
                "--scenario",
                sc,
                "--strategies",
                "none;rise=6;plenum=35",
            ],
            4,
        ),
        (
            "starts",
            vec![
                "starts",
                "--scenario",
                sc,
                "--count",
                "3",
                "--every-h",
                "10",
            ],
            1,
        ),
        (
            "airflow",
            vec![
                "airflow",
                "--container",
                "trailer-6m",
                "--fan",
                "vane-3kw",
                "--nx",
                "12",
                "--ny",
                "6",
                "--nz",
                "8",
            ],
            3,
        ),
        (
            "airflow-2d",
            vec![
                "airflow",
                "--container",
                "trailer-6m",
                "--fan",
                "vane-trailer",
                "--plenum",
                "2d",
                "--nx",
                "8",
                "--ny",
                "4",
                "--nz",
                "4",
            ],
            4,
        ),
        (
            "design",
            vec![
                "design",
                "--scenario",
                sc,
                "--stop",
                "hours=6",
                "--variants",
                "scenario;plenum=uniform;depth=1.0",
            ],
            10,
        ),
        (
            "season-run",
            vec![
                "season",
                "run",
                "--scenario",
                bp,
                "--generate",
                "--seed",
                "4",
                "--loads",
                "60",
            ],
            2,
        ),
        (
            "season-600",
            vec![
                "season",
                "run",
                "--scenario",
                big,
                "--generate",
                "--seed",
                "5",
                "--loads",
                "600",
                "--drier",
                "rate-rule",
            ],
            2,
        ),
        (
            "season-sweep",
            vec![
                "season",
                "sweep",
                "--scenario",
                bp,
                "--dryers",
                "2..3",
                "--policies",
                "fcfs",
                "--drier",
                "rate-rule",
                "--seasons",
                "3",
                "--loads",
                "40",
            ],
            0,
        ),
        // The four at-the-dryer and fitting commands, kept small: few members, a short plan, a coarse grid.
        ("status", vec!["status", &status, "--members", "4"], 1),
        (
            "status-us",
            vec!["status", &status, "--members", "4", "--units", "us"],
            1,
        ),
        (
            "board",
            vec!["board", &board, "--members", "2", "--horizon-h", "24"],
            1,
        ),
        (
            "calibrate",
            vec![
                "calibrate",
                "--load",
                &load23,
                &samples23,
                "--fit",
                "kernel-rate",
            ],
            1,
        ),
        (
            "airflow-fit",
            vec![
                "airflow",
                "fit",
                "--survey",
                &survey,
                "--container",
                "trailer-6m",
                "--fan",
                "vane-3kw",
                "--nx",
                "16",
                "--ny",
                "6",
                "--nz",
                "6",
                "--units",
                "us",
            ],
            5,
        ),
    ];
    for (name, args, pictures) in cases {
        let out = dir.path().join(name);
        run_ok(&args, &out);
        let html = out.join("report.html");
        assert!(html.exists(), "{name}: no report.html");
        let svgs = check_in_browser(&chrome, name, &html);
        assert!(
            svgs >= pictures,
            "{name}: {svgs} pictures, wanted {pictures}"
        );
        eprintln!("html_reports: {name}: {svgs} pictures checked");
    }
}
