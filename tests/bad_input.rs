//! Bad input: each case gives one clear message naming the fault, a non-zero exit, and
//! writes nothing.

use std::path::Path;
use std::process::Command;

/// A small valid panel: 8 units x 2 waves, three indicators.
fn good_csv() -> String {
    let mut s = String::from("unit,wave,y,x1,x2,x3\n");
    for u in 0..8 {
        for w in 0..2 {
            let a = (u * 7 + w * 3) % 11;
            let b = (u * 5 + w) % 7;
            let c = (u * 3 + w * 5) % 13;
            let y = 2.0 + 0.5 * a as f64 - 0.3 * b as f64 + 0.1 * c as f64;
            s.push_str(&format!("u{u},{w},{y:.2},{a}.5,{b}.25,{c}.75\n"));
        }
    }
    s
}

const GOOD_CFG: &str = r#"
[data]
file = "panel.csv"
unit = "unit"
wave = "wave"
outcome = "y"
[folds]
k = 4
[choices]
model = ["ridge", "ols"]
"#;

struct Case {
    name: &'static str,
    csv: Option<Vec<u8>>,
    cfg: String,
    expect: &'static [&'static str],
}

fn run_case(dir: &Path, c: &Case) -> (i32, String) {
    if let Some(csv) = &c.csv {
        std::fs::write(dir.join("panel.csv"), csv).unwrap();
    }
    std::fs::write(dir.join("sweep.toml"), &c.cfg).unwrap();
    let st = Command::new(env!("CARGO_BIN_EXE_forkmap"))
        .arg("run")
        .arg(dir.join("sweep.toml"))
        .arg("--out")
        .arg(dir.join("out"))
        .arg("--quiet")
        .output()
        .unwrap();
    (
        st.status.code().unwrap_or(-1),
        String::from_utf8_lossy(&st.stderr).to_string(),
    )
}

fn bytes(s: impl Into<Vec<u8>>) -> Option<Vec<u8>> {
    Some(s.into())
}

fn cfg_with(extra: &str) -> String {
    format!("{GOOD_CFG}{extra}")
}

fn cases() -> Vec<Case> {
    let good = good_csv();
    let lines: Vec<String> = good.lines().map(String::from).collect();
    let edit = |f: &dyn Fn(&mut Vec<String>)| {
        let mut l = lines.clone();
        f(&mut l);
        l.join("\n") + "\n"
    };

    vec![
        Case {
            name: "missing data file",
            csv: None,
            cfg: GOOD_CFG.replace("panel.csv", "nowhere.csv"),
            expect: &["nowhere.csv", "file not found"],
        },
        Case {
            name: "missing outcome column",
            csv: bytes(good.clone()),
            cfg: GOOD_CFG.replace("outcome = \"y\"", "outcome = \"yy\""),
            expect: &["outcome column `yy` not found", "did you mean `y`"],
        },
        Case {
            name: "non-numeric cell",
            csv: bytes(edit(&|l| {
                let mut f: Vec<String> = l[3].split(',').map(String::from).collect();
                f[4] = "abc".into();
                l[3] = f.join(",");
            })),
            cfg: GOOD_CFG.into(),
            expect: &["row 3 (line 4)", "column `x2`", "`abc` is not a number"],
        },
        Case {
            name: "infinite outcome",
            csv: bytes(edit(&|l| {
                let mut f: Vec<String> = l[5].split(',').map(String::from).collect();
                f[2] = "inf".into();
                l[5] = f.join(",");
            })),
            cfg: GOOD_CFG.into(),
            expect: &["row 5 (line 6)", "outcome `y`", "finite"],
        },
        Case {
            name: "NaN outcome",
            csv: bytes(edit(&|l| {
                let mut f: Vec<String> = l[1].split(',').map(String::from).collect();
                f[2] = "NaN".into();
                l[1] = f.join(",");
            })),
            cfg: GOOD_CFG.into(),
            expect: &["row 1 (line 2)", "outcome `y` is missing"],
        },
        Case {
            name: "duplicate unit and wave",
            csv: bytes(edit(&|l| {
                let r = l[1].clone();
                l.push(r);
            })),
            cfg: GOOD_CFG.into(),
            expect: &[
                "unit `u0` wave `0` appears twice",
                "row 1 (line 2)",
                "row 17 (line 18)",
            ],
        },
        Case {
            name: "fewer units than folds",
            csv: bytes(good.clone()),
            cfg: GOOD_CFG.replace("k = 4", "k = 9"),
            expect: &["9 folds need at least 9 units", "has 8"],
        },
        Case {
            name: "empty dimension",
            csv: bytes(good.clone()),
            cfg: GOOD_CFG.replace("model = [\"ridge\", \"ols\"]", "model = []"),
            expect: &["choices.model is empty"],
        },
        Case {
            name: "exclusions leave nothing",
            csv: bytes(good.clone()),
            cfg: cfg_with("[[exclude]]\nmodel = [\"ridge\", \"ols\"]\n"),
            expect: &["exclusions remove all 2 combinations"],
        },
        Case {
            name: "unknown config key",
            csv: bytes(good.clone()),
            cfg: GOOD_CFG.replace("k = 4", "kk = 4"),
            expect: &["unknown key `folds.kk`", "did you mean `k`"],
        },
        Case {
            name: "unknown top-level key",
            csv: bytes(good.clone()),
            cfg: format!("sede = 3\n{GOOD_CFG}"),
            expect: &["unknown key `sede`", "did you mean `seed`"],
        },
        Case {
            name: "unknown indicator in a pool",
            csv: bytes(good.clone()),
            cfg: GOOD_CFG
                .replace("[choices]", "[choices]\npool = [\"mine\"]")
                .to_string()
                + "[pools]\nmine = [\"x1\", \"x9\"]\n",
            expect: &["pools.mine: unknown indicator `x9`", "did you mean `x1`"],
        },
        Case {
            name: "unknown pool",
            csv: bytes(good.clone()),
            cfg: GOOD_CFG.replace("[choices]", "[choices]\npool = [\"alll\"]"),
            expect: &["unknown pool `alll`", "did you mean `all`"],
        },
        Case {
            name: "unknown model",
            csv: bytes(good.clone()),
            cfg: GOOD_CFG.replace("\"ols\"", "\"olss\""),
            expect: &["choices.model: unknown option `olss`", "did you mean `ols`"],
        },
        Case {
            name: "grid value out of range",
            csv: bytes(good.clone()),
            cfg: cfg_with("[grid.ridge]\nalpha = [1, -2]\n"),
            expect: &["grid.ridge.alpha = -2 is out of range"],
        },
        Case {
            name: "unknown grid parameter",
            csv: bytes(good.clone()),
            cfg: cfg_with("[grid.ridge]\nalfa = [1]\n"),
            expect: &["unknown key `grid.ridge.alfa`", "did you mean `alpha`"],
        },
        Case {
            name: "empty data file",
            csv: bytes(String::new()),
            cfg: GOOD_CFG.into(),
            expect: &["panel.csv", "empty"],
        },
        Case {
            name: "header only",
            csv: bytes("unit,wave,y,x1\n"),
            cfg: GOOD_CFG.into(),
            expect: &["header but no data rows"],
        },
        Case {
            name: "duplicated column names",
            csv: bytes(good.replacen("x3", "x2", 1)),
            cfg: GOOD_CFG.into(),
            expect: &["column name `x2` appears twice", "columns 5 and 6"],
        },
        Case {
            name: "ragged row",
            csv: bytes(edit(&|l| l[4].push_str(",9"))),
            cfg: GOOD_CFG.into(),
            expect: &["panel.csv", "line 5"],
        },
        Case {
            name: "thousands separator",
            csv: bytes(edit(&|l| {
                let mut f: Vec<String> = l[2].split(',').map(String::from).collect();
                f[3] = "\"1,234\"".into();
                l[2] = f.join(",");
            })),
            cfg: GOOD_CFG.into(),
            expect: &[
                "row 2 (line 3)",
                "`1,234` is not a number",
                "thousands separators",
            ],
        },
        Case {
            name: "constant indicator",
            csv: bytes(edit(&|l| {
                for (i, row) in l.iter_mut().enumerate().skip(1) {
                    let mut f: Vec<String> = row.split(',').map(String::from).collect();
                    f[5] = "4".into();
                    let _ = i;
                    *row = f.join(",");
                }
            })),
            cfg: GOOD_CFG.into(),
            expect: &["indicator `x3` has one value in every row"],
        },
        Case {
            name: "all-missing indicator",
            csv: bytes(edit(&|l| {
                for row in l.iter_mut().skip(1) {
                    let mut f: Vec<String> = row.split(',').map(String::from).collect();
                    f[5] = "NA".into();
                    *row = f.join(",");
                }
            })),
            cfg: GOOD_CFG.replace(
                "outcome = \"y\"",
                "outcome = \"y\"\nindicators = [\"x1\", \"x2\", \"x3\"]",
            ),
            expect: &["indicator `x3` is missing in every row"],
        },
        Case {
            name: "percent outcome out of range",
            csv: bytes(edit(&|l| {
                let mut f: Vec<String> = l[6].split(',').map(String::from).collect();
                f[2] = "120".into();
                l[6] = f.join(",");
            })),
            cfg: GOOD_CFG.replace(
                "outcome = \"y\"",
                "outcome = \"y\"\noutcome_kind = \"percent\"",
            ),
            expect: &["row 6 (line 7)", "outcome `y` is 120", "[0, 100]"],
        },
        Case {
            name: "logit without a bounded outcome",
            csv: bytes(good.clone()),
            cfg: GOOD_CFG.replace("[choices]", "[choices]\ntransform = [\"logit\"]"),
            expect: &["choices.transform", "logit", "outcome_kind"],
        },
        Case {
            name: "unknown importance kind",
            csv: bytes(good.clone()),
            cfg: cfg_with("[importance]\nkinds = [\"permutaton\"]\n"),
            expect: &["importance.kinds", "did you mean `permutation`"],
        },
        Case {
            name: "missing config section",
            csv: bytes(good.clone()),
            cfg: "[folds]\nk = 3\n".into(),
            expect: &["missing the [data] section"],
        },
        Case {
            name: "unknown codebook group",
            csv: bytes(good.clone()),
            cfg: GOOD_CFG
                .replace("outcome = \"y\"", "outcome = \"y\"\ncodebook = \"cb.csv\"")
                .replace("[choices]", "[choices]\npool = [\"group:wealth\"]"),
            expect: &["no codebook group `wealth`"],
        },
        Case {
            name: "bad encoding (Latin-1 byte)",
            // "u\xE93" as Latin-1 would write an accented unit name.
            csv: bytes({
                let mut b = good.clone().into_bytes();
                let at = good.find("\nu3,").unwrap() + 2;
                b.insert(at, 0xE9);
                b
            }),
            cfg: GOOD_CFG.into(),
            expect: &[
                "panel.csv",
                "line 8",
                "not UTF-8",
                "byte 0xE9",
                "save the file as UTF-8",
            ],
        },
        Case {
            name: "UTF-16 file",
            csv: bytes({
                let mut b = vec![0xFF, 0xFE];
                for u in good.encode_utf16() {
                    b.extend(u.to_le_bytes());
                }
                b
            }),
            cfg: GOOD_CFG.into(),
            expect: &["panel.csv", "UTF-16", "save it as UTF-8"],
        },
        Case {
            name: "spreadsheet saved under a .csv name",
            csv: bytes(b"PK\x03\x04\x14\x00\x06\x00rest of a zip".to_vec()),
            cfg: GOOD_CFG.into(),
            expect: &["panel.csv", "spreadsheet", "export"],
        },
        Case {
            name: "NUL byte in a text file",
            csv: bytes(good.replacen("u2,", "u2\0,", 1)),
            cfg: GOOD_CFG.into(),
            expect: &["panel.csv", "line 6", "NUL"],
        },
        Case {
            name: "huge value",
            csv: bytes(edit(&|l| {
                let mut f: Vec<String> = l[3].split(',').map(String::from).collect();
                f[4] = "3e200".into();
                l[3] = f.join(",");
            })),
            cfg: GOOD_CFG.into(),
            expect: &["row 3 (line 4)", "`x2`", "3e200", "too large"],
        },
        Case {
            name: "negative values under NMF without scaling",
            csv: bytes(edit(&|l| {
                let mut f: Vec<String> = l[5].split(',').map(String::from).collect();
                f[3] = "-2.5".into();
                l[5] = f.join(",");
            })),
            cfg: GOOD_CFG.replace(
                "[choices]",
                "[choices]\nscale = [\"none\"]\ncompress = [\"nmf\"]",
            ) + "[grid.nmf]\nk = [2]\n",
            expect: &["nmf", "`x1`", "-2.5", "row", "minmax"],
        },
        Case {
            name: "standard error not positive",
            csv: bytes(edit(&|l| {
                let mut f: Vec<String> = l[4].split(',').map(String::from).collect();
                f[5] = "0".into();
                l[4] = f.join(",");
            })),
            cfg: GOOD_CFG.replace(
                "outcome = \"y\"",
                "outcome = \"y\"\nstandard_error = \"x3\"",
            ),
            expect: &["x3", "row 4 (line 5)", "positive"],
        },
        Case {
            name: "empty unit cell",
            csv: bytes(edit(&|l| {
                let mut f: Vec<String> = l[6].split(',').map(String::from).collect();
                f[0] = String::new();
                l[6] = f.join(",");
            })),
            cfg: GOOD_CFG.into(),
            expect: &["row 6 (line 7)", "unit"],
        },
        Case {
            name: "unknown file type",
            csv: bytes(good.clone()),
            // The config itself as the data file: it exists, but is no table.
            cfg: GOOD_CFG.replace("panel.csv", "sweep.toml"),
            expect: &["unknown file type `.toml`", ".csv"],
        },
        Case {
            name: "option listed twice",
            csv: bytes(good.clone()),
            cfg: GOOD_CFG.replace("[\"ridge\", \"ols\"]", "[\"ridge\", \"ridge\"]"),
            expect: &["choices.model", "`ridge` twice"],
        },
        Case {
            name: "grid value not a number",
            csv: bytes(good.clone()),
            cfg: cfg_with("[grid.ridge]\nalpha = [\"big\"]\n"),
            expect: &["grid.ridge.alpha", "not a number"],
        },
        Case {
            name: "negative importance.within",
            csv: bytes(good.clone()),
            cfg: cfg_with("[importance]\nwithin = -0.1\n"),
            expect: &["importance.within", ">= 0"],
        },
        Case {
            name: "codebook without a group column",
            csv: bytes(good.clone()),
            cfg: GOOD_CFG.replace(
                "outcome = \"y\"",
                "outcome = \"y\"\ncodebook = \"cb-nogroup.csv\"",
            ),
            expect: &["cb-nogroup.csv", "group"],
        },
        Case {
            name: "leave-one-unit-out with repeats",
            csv: bytes(good),
            cfg: GOOD_CFG.replace("k = 4", "scheme = \"leave-one-unit-out\"\nrepeats = 2"),
            expect: &["leave-one-unit-out", "repeats = 1"],
        },
    ]
}

#[test]
fn bad_inputs_are_refused_clearly_and_write_nothing() {
    let all = cases();
    assert!(all.len() >= 30, "the catalogue has {} cases", all.len());
    let mut failures = Vec::new();
    for c in &all {
        let tmp = tempfile::tempdir().unwrap();
        std::fs::write(
            tmp.path().join("cb.csv"),
            "indicator,group,label\nx1,money,X one\nx2,money,X two\nx3,place,X three\n",
        )
        .unwrap();
        std::fs::write(
            tmp.path().join("cb-nogroup.csv"),
            "indicator,label\nx1,X one\nx2,X two\n",
        )
        .unwrap();
        let (code, err) = run_case(tmp.path(), c);
        let lines: Vec<&str> = err.lines().filter(|l| !l.trim().is_empty()).collect();
        let ok = code != 0
            && c.expect.iter().all(|e| err.contains(e))
            && lines.len() == 1
            && !tmp.path().join("out").exists();
        if !ok {
            failures.push(format!(
                "{}: exit {code}, out exists: {}, stderr:\n{err}",
                c.name,
                tmp.path().join("out").exists()
            ));
        }
    }
    assert!(
        failures.is_empty(),
        "{} of {} cases failed:\n{}",
        failures.len(),
        all.len(),
        failures.join("\n")
    );
}

#[test]
fn the_good_case_runs() {
    let tmp = tempfile::tempdir().unwrap();
    let c = Case {
        name: "good",
        csv: bytes(good_csv()),
        cfg: GOOD_CFG.into(),
        expect: &[],
    };
    let (code, err) = run_case(tmp.path(), &c);
    assert_eq!(code, 0, "{err}");
    assert!(tmp.path().join("out/manifest.json").exists());
}

/// Inputs that look odd but are valid are read, not refused: a UTF-8 byte-order mark (as
/// spreadsheets write), a quoted plain number (standard CSV quoting), a unit seen in one
/// wave only under grouped folds (run, with a warning naming it).
#[test]
fn odd_but_valid_inputs_are_accepted() {
    let good = good_csv();
    let mut bom = vec![0xEF, 0xBB, 0xBF];
    bom.extend(good.as_bytes());
    let quoted = good.replacen("\nu3,0,", "\n\"u3\",\"0\",", 1);
    assert_ne!(quoted, good);
    let one_row: String = good
        .lines()
        .filter(|l| !l.starts_with("u5,1,"))
        .map(|l| format!("{l}\n"))
        .collect();
    let with_quoted_value = {
        let mut l: Vec<String> = good.lines().map(String::from).collect();
        let mut f: Vec<String> = l[2].split(',').map(String::from).collect();
        f[3] = format!("\"{}\"", f[3]);
        l[2] = f.join(",");
        l.join("\n") + "\n"
    };
    for (name, csv, warn) in [
        ("UTF-8 byte-order mark", bom, None),
        ("quoted unit and wave", quoted.into_bytes(), None),
        ("quoted number", with_quoted_value.into_bytes(), None),
        (
            "unit with one row",
            one_row.into_bytes(),
            Some("1 of 8 units have one row only (u5)"),
        ),
    ] {
        let tmp = tempfile::tempdir().unwrap();
        let c = Case {
            name,
            csv: Some(csv),
            cfg: GOOD_CFG.into(),
            expect: &[],
        };
        let (code, err) = run_case(tmp.path(), &c);
        assert_eq!(code, 0, "{name}: {err}");
        if let Some(w) = warn {
            assert!(err.contains(w), "{name}: no warning `{w}` in:\n{err}");
        }
        let m = std::fs::read_to_string(tmp.path().join("out/manifest.json")).unwrap();
        let rows = if name == "unit with one row" { 15 } else { 16 };
        assert!(m.contains(&format!("\"rows\": {rows}")), "{name}: {m}");
    }
}

#[test]
fn unwritable_or_occupied_output_is_refused() {
    let tmp = tempfile::tempdir().unwrap();
    std::fs::write(tmp.path().join("panel.csv"), good_csv()).unwrap();
    std::fs::write(tmp.path().join("sweep.toml"), GOOD_CFG).unwrap();
    std::fs::write(tmp.path().join("afile"), "not a folder").unwrap();
    let run = |out: &Path| {
        Command::new(env!("CARGO_BIN_EXE_forkmap"))
            .arg("run")
            .arg(tmp.path().join("sweep.toml"))
            .arg("--out")
            .arg(out)
            .arg("--quiet")
            .output()
            .unwrap()
    };
    // A path below a regular file cannot be created.
    let st = run(&tmp.path().join("afile/out"));
    assert_ne!(st.status.code(), Some(0));
    let err = String::from_utf8_lossy(&st.stderr);
    assert!(
        err.contains("afile/out") && err.contains("cannot create"),
        "{err}"
    );
    // A folder holding something else is never written into.
    let busy = tmp.path().join("busy");
    std::fs::create_dir(&busy).unwrap();
    std::fs::write(busy.join("keep.txt"), "precious").unwrap();
    let st = run(&busy);
    assert_ne!(st.status.code(), Some(0));
    assert!(String::from_utf8_lossy(&st.stderr).contains("not empty"));
    let names: Vec<_> = std::fs::read_dir(&busy)
        .unwrap()
        .map(|e| e.unwrap().file_name())
        .collect();
    assert_eq!(names, vec![std::ffi::OsString::from("keep.txt")]);
}
