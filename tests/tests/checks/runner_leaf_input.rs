//! `isodisc leaf --input` with a measurement file as it comes: columns that are not conditions or
//! parameters (sample IDs, treatments) pass through unchanged, and `--map NAME=COLUMN` reads the
//! file's own column names as conditions. Expected values are the same leaves given by flags.

use std::fs;

use crate::common::run;

fn rows(path: &std::path::Path) -> (csv::StringRecord, Vec<csv::StringRecord>) {
    let mut r = csv::Reader::from_path(path).unwrap();
    let h = r.headers().unwrap().clone();
    (h, r.records().map(|x| x.unwrap()).collect())
}

#[test]
fn pass_through_columns_and_mapped_names_give_the_same_leaves_as_flags() {
    let dir = tempfile::tempdir().unwrap();
    let input = dir.path().join("gasex.csv");
    // Invented gas-exchange log: an ID with a comma (quoted), a treatment, and the instrument's
    // own names for leaf temperature and PPFD.
    fs::write(
        &input,
        "sample,Tleaf,treat,PARi,ca\n\"A,1\",25,dry,1500,420\nB2,30,wet,800,400\n",
    )
    .unwrap();
    let out = dir.path().join("out.csv");
    run(&[
        "leaf",
        "--input",
        input.to_str().unwrap(),
        "--map",
        "t_leaf=Tleaf",
        "--map",
        "ppfd=PARi",
        "--format",
        "csv",
        "--output",
        out.to_str().unwrap(),
    ])
    .unwrap();
    let (header, got) = rows(&out);
    assert_eq!(&header[0], "sample");
    assert_eq!(&header[1], "treat");
    assert_eq!((&got[0][0], &got[0][1]), ("A,1", "dry"));
    assert_eq!((&got[1][0], &got[1][1]), ("B2", "wet"));
    let col = |name: &str| header.iter().position(|h| h == name).unwrap();
    // The same leaves by flags.
    for (row, (t, ppfd, ca)) in got
        .iter()
        .zip([("25", "1500", "420"), ("30", "800", "400")])
    {
        let single = dir.path().join(format!("single_{t}.csv"));
        run(&[
            "leaf",
            "--t-leaf",
            t,
            "--ppfd",
            ppfd,
            "--ca",
            ca,
            "--format",
            "csv",
            "--output",
            single.to_str().unwrap(),
        ])
        .unwrap();
        let (h1, one) = rows(&single);
        for name in ["t_leaf", "ppfd", "a_net", "discrimination"] {
            let i = h1.iter().position(|h| h == name).unwrap();
            assert_eq!(&row[col(name)], &one[0][i], "{name}");
        }
    }
}

#[test]
fn json_output_keeps_pass_through_cells_as_text() {
    let dir = tempfile::tempdir().unwrap();
    let input = dir.path().join("ids.csv");
    fs::write(&input, "plot,t_leaf\n007,25\n").unwrap();
    let out = dir.path().join("out.json");
    run(&[
        "leaf",
        "--input",
        input.to_str().unwrap(),
        "--format",
        "json",
        "--output",
        out.to_str().unwrap(),
    ])
    .unwrap();
    let v: serde_json::Value =
        serde_json::from_str(fs::read_to_string(&out).unwrap().lines().next().unwrap()).unwrap();
    // "007" stays a string: an ID is not a number.
    assert_eq!(v["plot"], "007");
    assert_eq!(v["t_leaf"], 25.0);
}

#[test]
fn bad_maps_are_named() {
    let dir = tempfile::tempdir().unwrap();
    let input = dir.path().join("in.csv");
    fs::write(&input, "Tleaf,t_lea\n25,1\n").unwrap();
    let p = input.to_str().unwrap();
    for (map, expect) in [
        ("t_leaf", "expected NAME=COLUMN"),
        ("tleaf=Tleaf", "not a condition"),
        ("t_leaf=Tlef", "no column `Tlef`"),
    ] {
        let err = run(&["leaf", "--input", p, "--map", map]).unwrap_err();
        assert!(err.contains(expect), "{map}: {err}");
    }
    // A column one letter from a condition is a likely typo, not a pass-through column.
    let err = run(&["leaf", "--input", p, "--map", "t_leaf=Tleaf"]).unwrap_err();
    assert!(
        err.contains("`t_lea`") && err.contains("did you mean `t_leaf`"),
        "{err}"
    );
}

/// Rows are solved in blocks on several threads: a long file gives the same rows as each row run
/// alone, in input order, and the first bad row (past the first blocks) is reported by its own
/// line (common practice: a streamed result equals the row-by-row one).
#[test]
fn long_inputs_keep_row_order_and_report_the_first_bad_line() {
    let dir = tempfile::tempdir().unwrap();
    let input = dir.path().join("long.csv");
    let mut text = String::from("sample,t_leaf,ppfd\n");
    for i in 0..9_000 {
        text.push_str(&format!("r{i},{},{}\n", 5 + i % 30, (i * 37) % 2000));
    }
    std::fs::write(&input, &text).unwrap();
    let out = dir.path().join("out.csv");
    let p = |x: &std::path::Path| x.to_str().unwrap().to_string();
    crate::common::run(&[
        "leaf",
        "--input",
        &p(&input),
        "--output",
        &p(&out),
        "--format",
        "csv",
    ])
    .unwrap();
    let got = std::fs::read_to_string(&out).unwrap();
    let rows: Vec<&str> = got.lines().skip(1).collect();
    assert_eq!(rows.len(), 9_000);
    for i in [0usize, 2_047, 2_048, 4_097, 8_999] {
        assert!(
            rows[i].starts_with(&format!("r{i},")),
            "row {i}: {}",
            rows[i]
        );
        let single = dir.path().join("one.csv");
        std::fs::write(
            &single,
            format!("sample,t_leaf,ppfd\n{}", text.lines().nth(i + 1).unwrap()),
        )
        .unwrap();
        let one_out = dir.path().join("one_out.csv");
        crate::common::run(&[
            "leaf",
            "--input",
            &p(&single),
            "--output",
            &p(&one_out),
            "--format",
            "csv",
        ])
        .unwrap();
        let one = std::fs::read_to_string(&one_out).unwrap();
        assert_eq!(one.lines().nth(1).unwrap(), rows[i], "row {i}");
    }
    // A bad cell on line 7,001 and another later: the first is named.
    let mut lines: Vec<String> = text.lines().map(String::from).collect();
    lines[7_000] = "r6999,warm,100".into();
    lines[8_500] = "r8499,x,100".into();
    std::fs::write(&input, lines.join("\n")).unwrap();
    let err =
        crate::common::run(&["leaf", "--input", &p(&input), "--output", &p(&out)]).unwrap_err();
    assert!(
        err.contains("line 7001, column 2 (`t_leaf`): `warm` is not a number"),
        "{err}"
    );
}

/// A file as spreadsheets save it (RFC 4180): CRLF line breaks, a byte-order mark, quoted cells
/// with commas and doubled quotes, quoted numbers, blank lines. Its rows give the same leaves as
/// the plain file, and the pass-through cells are what the `csv` crate (an RFC 4180 reader, as
/// reference) reads from it.
#[test]
fn spreadsheet_csv_reads_as_an_rfc4180_reader_reads_it() {
    let dir = tempfile::tempdir().unwrap();
    let fancy = dir.path().join("fancy.csv");
    let plain = dir.path().join("plain.csv");
    fs::write(
        &fancy,
        "\u{feff}sample,t_leaf,ppfd\r\n\"A,1\",25,1500\r\n\r\n\"say \"\"hi\"\"\",\"30\",800\r\nC3,18.5,\r\n",
    )
    .unwrap();
    fs::write(
        &plain,
        "sample,t_leaf,ppfd\nA1,25,1500\nB,30,800\nC3,18.5,\n",
    )
    .unwrap();
    let solve = |input: &std::path::Path, name: &str| {
        let out = dir.path().join(name);
        run(&[
            "leaf",
            "--input",
            input.to_str().unwrap(),
            "--format",
            "csv",
            "--output",
            out.to_str().unwrap(),
        ])
        .unwrap();
        rows(&out)
    };
    let (h1, got) = solve(&fancy, "fancy_out.csv");
    let (h2, want) = solve(&plain, "plain_out.csv");
    assert_eq!(h1, h2);
    assert_eq!(got.len(), 3);
    let mut reference = csv::ReaderBuilder::new()
        .trim(csv::Trim::All)
        .from_path(&fancy)
        .unwrap();
    let ids: Vec<String> = reference
        .records()
        .map(|r| r.unwrap()[0].to_string())
        .collect();
    for ((g, w), id) in got.iter().zip(&want).zip(&ids) {
        assert_eq!(&g[0], id.as_str());
        assert_eq!(
            g.iter().skip(1).collect::<Vec<_>>(),
            w.iter().skip(1).collect::<Vec<_>>()
        );
    }
}

/// One row is one line: a quoted cell that runs past its line, a row with a cell too many, and a
/// bad number after blank lines in a later block are each refused by their own line (counted in
/// the file, blank lines included) and column (common practice).
#[test]
fn rows_that_do_not_fit_their_line_are_refused_by_line() {
    let dir = tempfile::tempdir().unwrap();
    let input = dir.path().join("bad.csv");
    let p = input.to_str().unwrap();
    fs::write(&input, "sample,t_leaf\n\"A\n1\",25\n").unwrap();
    let err = run(&["leaf", "--input", p]).unwrap_err();
    assert!(
        err.contains("bad.csv: line 2, column 1: a quoted cell is not closed"),
        "{err}"
    );
    fs::write(&input, "sample,t_leaf\nA,25\nB,25,7\n").unwrap();
    let err = run(&["leaf", "--input", p]).unwrap_err();
    assert!(
        err.contains("line 3: 3 cells where the header has 2"),
        "{err}"
    );
    // 20,000 rows (several blocks), a blank line every 100, a bad cell on line 15,151.
    let mut text = String::from("t_leaf,ppfd\n");
    let mut line = 1;
    let mut bad_line = 0;
    for i in 0..20_000 {
        if i % 100 == 50 {
            text.push('\n');
            line += 1;
        }
        line += 1;
        if i == 15_000 {
            text.push_str("25,bright\n");
            bad_line = line;
        } else {
            text.push_str(&format!("{},{}\n", 10 + i % 20, i % 2000));
        }
    }
    fs::write(&input, &text).unwrap();
    let err = run(&[
        "leaf",
        "--input",
        p,
        "--output",
        dir.path().join("o.csv").to_str().unwrap(),
    ])
    .unwrap_err();
    let want = format!("line {bad_line}, column 2 (`ppfd`): `bright` is not a number");
    assert!(err.contains(&want), "{err} (expected {want})");
    assert_eq!(text.lines().nth(bad_line - 1), Some("25,bright"));
}
