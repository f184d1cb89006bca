//! `hostcut bench`: the formulations reach the same optimum on a small synthetic landscape, and
//! the synthetic generator is deterministic (unit test in src/synthetic.rs).

mod common;

use common::*;

#[test]
fn formulations_agree_on_a_small_synthetic_landscape() {
    let dir = tempfile::tempdir().unwrap();
    let o = run(
        dir.path(),
        &[
            "bench",
            "--patches",
            "14",
            "--alpha-m",
            "300",
            "--time-limit-s",
            "60",
            "--gap",
            "0",
            "--formulations",
            "transport,compact,direct",
        ],
    );
    assert!(o.status.success(), "{}", stderr(&o));
    let text = stdout(&o);
    let risk = |name: &str| -> (String, f64) {
        let line = text
            .lines()
            .find(|l| l.starts_with(name))
            .unwrap_or_else(|| panic!("no {name} line in {text}"));
        let cols: Vec<&str> = line.split_whitespace().collect();
        (cols[1].to_string(), cols[2].parse().unwrap())
    };
    let (st, rt) = risk("transport");
    for name in ["compact", "direct"] {
        let (s, r) = risk(name);
        assert_eq!(s, "optimal", "{name}: {text}");
        assert!((r - rt).abs() <= 1e-9 * rt, "{name} {r} vs transport {rt}");
    }
    assert_eq!(st, "optimal");
    let (_, greedy) = risk("greedy");
    assert!(
        greedy >= rt * (1.0 - 1e-12),
        "greedy is never better than the optimum"
    );
    let o = run(dir.path(), &["bench", "--formulations", "simplex"]);
    assert_eq!(o.status.code(), Some(2));
}

/// `hostcut bench --mixed-classes` (issue 20's benchmark of prescriptions): each synthetic patch
/// has a size-class mix of its own, the line says so and counts the choices, and the exact
/// formulations still reach the same optimum (exhaustive agreement of independent formulations
/// is the oracle, as above), greedy never better.
#[test]
fn formulations_agree_with_mixed_size_classes() {
    let dir = tempfile::tempdir().unwrap();
    let args = |mixed: bool| {
        let mut a = vec![
            "bench",
            "--patches",
            "12",
            "--alpha-m",
            "300",
            "--methods",
            "5",
            "--time-limit-s",
            "60",
            "--gap",
            "0",
            "--formulations",
            "transport,direct",
        ];
        if mixed {
            a.push("--mixed-classes");
        }
        a
    };
    let o = run(dir.path(), &args(true));
    assert!(o.status.success(), "{}", stderr(&o));
    let text = stdout(&o);
    assert!(
        text.contains("a size-class mix of its own per patch"),
        "{text}"
    );
    let risk = |name: &str| -> (String, f64) {
        let line = text
            .lines()
            .find(|l| l.starts_with(name))
            .unwrap_or_else(|| panic!("no {name} line in {text}"));
        let cols: Vec<&str> = line.split_whitespace().collect();
        (cols[1].to_string(), cols[2].parse().unwrap())
    };
    let (st, rt) = risk("transport");
    let (sd, rd) = risk("direct");
    assert_eq!((st.as_str(), sd.as_str()), ("optimal", "optimal"), "{text}");
    assert!(
        (rd - rt).abs() <= 1e-9 * rt,
        "direct {rd} vs transport {rt}"
    );
    assert!(risk("greedy").1 >= rt * (1.0 - 1e-12), "{text}");
    // The default mix gives other choices: the flag is not ignored.
    let o = run(dir.path(), &args(false));
    assert!(o.status.success(), "{}", stderr(&o));
    assert!(
        stdout(&o).contains("(the default size mix)"),
        "{}",
        stdout(&o)
    );
    assert_ne!(stdout(&o).lines().next(), text.lines().next());
}

/// `hostcut bench --raster-side`: the patch count it reports equals an independent count of
/// the synthetic GeoTIFF's 8-connected components of cells at or above 10 stems/ha (the
/// defaults), by breadth-first search over the whole band read back through GDAL.
#[test]
fn raster_bench_counts_the_components_of_its_raster() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("host.tif");
    let o = run(
        dir.path(),
        &[
            "bench",
            "--raster-side",
            "600",
            "--patches",
            "900",
            "--clusters",
            "5",
            "--spread-m",
            "1500",
            "--raster-file",
            path.to_str().unwrap(),
        ],
    );
    assert!(o.status.success(), "{}", stderr(&o));
    let text = stdout(&o);
    let line = text
        .lines()
        .find(|l| l.starts_with("raster to patch graph"))
        .unwrap_or_else(|| panic!("no result line in {text}"));
    let reported: usize = line
        .split(", ")
        .find_map(|part| part.strip_suffix(" patches"))
        .and_then(|n| n.parse().ok())
        .unwrap_or_else(|| panic!("no patch count in {line}"));

    let ds = gdal::Dataset::open(&path).unwrap();
    let band = ds.rasterband(1).unwrap();
    assert_eq!(band.block_size(), (256, 256), "tiled as documented");
    let (w, h) = band.size();
    let values = band
        .read_as::<f32>((0, 0), (w, h), (w, h), None)
        .unwrap()
        .into_shape_and_vec()
        .1;
    let host = |i: usize| values[i] >= 10.0;
    let mut seen = vec![false; w * h];
    let mut components = 0;
    for start in 0..w * h {
        if seen[start] || !host(start) {
            continue;
        }
        components += 1;
        seen[start] = true;
        let mut queue = std::collections::VecDeque::from([start]);
        while let Some(i) = queue.pop_front() {
            let (r, c) = ((i / w) as i64, (i % w) as i64);
            for dr in -1..=1 {
                for dc in -1..=1 {
                    let (rr, cc) = (r + dr, c + dc);
                    if rr < 0 || cc < 0 || rr >= h as i64 || cc >= w as i64 {
                        continue;
                    }
                    let j = rr as usize * w + cc as usize;
                    if !seen[j] && host(j) {
                        seen[j] = true;
                        queue.push_back(j);
                    }
                }
            }
        }
    }
    assert!(
        components > 100,
        "{components} components: clumps were painted"
    );
    assert_eq!(reported, components, "{text}");
    // A second run reuses the file.
    let o = run(
        dir.path(),
        &[
            "bench",
            "--raster-side",
            "600",
            "--raster-file",
            path.to_str().unwrap(),
        ],
    );
    assert!(o.status.success(), "{}", stderr(&o));
    assert!(stdout(&o).contains("exists: reused"), "{}", stdout(&o));
}
