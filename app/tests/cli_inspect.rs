//! `fieldstone inspect` end to end.

use std::process::Command;

fn inspect(text: &[u8], args: &[&str]) -> std::process::Output {
    let p = std::env::temp_dir().join(format!(
        "fieldstone-inspect-{}-{}.txt",
        std::process::id(),
        args.len()
    ));
    std::fs::write(&p, text).unwrap();
    Command::new(env!("CARGO_BIN_EXE_fieldstone"))
        .arg("inspect")
        .arg(&p)
        .args(args)
        .output()
        .unwrap()
}

#[test]
fn reports_layout_roles_counts_ranges_and_lines() {
    let o = inspect(b"Line;Easting;Northing;Mag_nT\nL1;500000;7000000;55001,5\nL1;500005;7000000;*\nL2;500000;7000100;-99999\n", &["--dummy", "-99999"]);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let s = String::from_utf8_lossy(&o.stdout);
    for want in [
        "delimiter: semicolon (detected)",
        "header: yes (detected)",
        "rows: 3",
        "dummies: 2",
        "easting (x)",
        "magnetic reading",
        "nT",
        "55001.500",
        "lines: 2 (from column 'Line')",
    ] {
        assert!(s.contains(want), "missing '{want}' in:\n{s}");
    }
}

#[test]
fn overrides_and_errors() {
    let o = inspect(
        b"1 2 3\n4 5 6\n",
        &["--delimiter", "whitespace", "--no-header"],
    );
    let s = String::from_utf8_lossy(&o.stdout);
    assert!(
        s.contains("whitespace (given)")
            && s.contains("header: no (given)")
            && s.contains("rows: 2"),
        "{s}"
    );
    let o = inspect(b"x,y\n1,2\n1\n", &[]);
    assert!(!o.status.success());
    let e = String::from_utf8_lossy(&o.stderr);
    assert!(e.contains("line 3") && e.contains("expected 2"), "{e}");
    let o = inspect(b"x,y\n", &["--delimiter", "pipe"]);
    assert!(!o.status.success() && String::from_utf8_lossy(&o.stderr).contains("pipe"));
}

/// A file whose columns would not fit in the memory Fieldstone may use is
/// refused before it is read, with the file, the size and what to change.
#[test]
fn a_file_too_big_for_the_memory_limit_is_refused_before_reading() {
    let p = std::env::temp_dir().join(format!("fieldstone-inspect-big-{}.csv", std::process::id()));
    let mut text = String::from("a,b,c,d,e,f,g,h\n");
    text.push_str(&"1,2,3,4,5,6,7,8\n".repeat(1_200_000));
    std::fs::write(&p, &text).unwrap();
    let run = |mb: &str| {
        Command::new(env!("CARGO_BIN_EXE_fieldstone"))
            .arg("inspect")
            .arg(&p)
            .env("FIELDSTONE_MEMORY_MB", mb)
            .output()
            .unwrap()
    };
    let o = run("50");
    assert!(!o.status.success());
    let e = String::from_utf8_lossy(&o.stderr);
    assert!(
        e.contains(&p.display().to_string()) && e.contains("MB") && e.contains("split the file"),
        "{e}"
    );
    let o = run("2000");
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    std::fs::remove_file(&p).ok();
}

#[test]
fn roles_are_listed_and_stray_text_in_a_number_column_is_shown() {
    let o = Command::new(env!("CARGO_BIN_EXE_fieldstone"))
        .args(["inspect", "--roles"])
        .output()
        .unwrap();
    assert!(o.status.success());
    let s = String::from_utf8_lossy(&o.stdout);
    for key in [
        "x ",
        "y ",
        "lon ",
        "lat ",
        "height ",
        "line ",
        "station ",
        "time ",
        "date ",
        "gravity ",
        "magnetic ",
    ] {
        assert!(
            s.lines().any(|l| l.starts_with(key)),
            "no role key '{key}' in:\n{s}"
        );
    }
    let o = inspect(
        b"station_id,longitude,latitude,elevation,time_minutes,reading\nB1,-80.5,43.1,310,0,2851.2\n2,-80.4,43.1,311,10,2850.1\n3,-80.4,43.1,312,20,28S0.4\n4,-80.4,43.1,313,30,2849.9\n5,-80.4,43.1,314,40,2849.7\n6,-80.4,43.1,314,50,2849.5\n",
        &["--dummy", "-99999", "--header"],
    );
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let s = String::from_utf8_lossy(&o.stdout);
    for want in [
        "station / fiducial",
        "longitude",
        "latitude",
        "elevation",
        "gravity reading",
        "column 'reading' holds numbers but 1 value(s) are not numbers",
        "line 4: '28S0.4'",
    ] {
        assert!(s.contains(want), "missing '{want}' in:\n{s}");
    }
}

/// `--column` and `--unit` show what another command would read when told
/// them; a second column guessed alike is carried, not refused.
#[test]
fn overrides_show_their_effect_and_look_alike_columns_are_carried() {
    let text = b"P,Q,R,gravity_mgal,observed_gravity_mgal\n1,2,30,4320.1,980000.1\n2,3,31,4320.2,980000.2\n";
    let o = inspect(text, &[]);
    let out = String::from_utf8_lossy(&o.stdout);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let row = |out: &str, name: &str| {
        out.lines()
            .find(|l| l.split_whitespace().nth(1) == Some(name))
            .unwrap_or_else(|| panic!("no row {name}: {out}"))
            .to_string()
    };
    assert!(
        row(&out, "observed_gravity_mgal").contains("pass through"),
        "{out}"
    );
    assert!(row(&out, "R").contains("pass through"), "{out}");
    let o = inspect(
        text,
        &[
            "--column", "x=P", "--column", "y=Q", "--column", "height=R", "--unit", "R=ft",
        ],
    );
    let out = String::from_utf8_lossy(&o.stdout);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    assert!(row(&out, "P").contains("easting"), "{out}");
    let r = row(&out, "R");
    assert!(r.contains("elevation") && r.contains("ft"), "{r}");
    let o = inspect(text, &["--column", "depth=R"]);
    assert!(!o.status.success());
    assert!(String::from_utf8_lossy(&o.stderr).contains("'depth' is not a role"));
}
