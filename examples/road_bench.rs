//! Road-network benchmark (issue 21): a grid of about 10^6 road pieces and 500 stops — build,
//! travel matrix, one tour and its split into days — beside the straight-line travel in the
//! same process. Not a test: run it and record the numbers in docs/benchmarks.md.
//!
//! ```text
//! cargo run --release --example road_bench -- [SIDE=708] [SHAPE_POINTS=0] [STOPS=500] [THREADS=2] [METHOD=auto]
//! ```
//!
//! METHOD: `auto` (as `orders` picks), `dijkstra` or `hierarchy`.

fn peak_memory_mb() -> Option<f64> {
    let status = std::fs::read_to_string("/proc/self/status").ok()?;
    let line = status.lines().find(|l| l.starts_with("VmHWM:"))?;
    let kb: f64 = line.split_whitespace().nth(1)?.parse().ok()?;
    Some(kb / 1024.0)
}

fn main() {
    let arg = |k: usize, default: usize| {
        std::env::args()
            .nth(k)
            .map(|a| {
                a.parse()
                    .expect("SIDE, SHAPE_POINTS, STOPS and THREADS are whole numbers")
            })
            .unwrap_or(default)
    };
    let (side, shape_points, stops, threads) = (arg(1, 708), arg(2, 0), arg(3, 500), arg(4, 2));
    use hostcut::field::network::TravelMethod;
    let method = match std::env::args().nth(5).as_deref() {
        None | Some("auto") => None,
        Some("dijkstra") => Some(TravelMethod::Dijkstra),
        Some("hierarchy") => Some(TravelMethod::Hierarchy),
        Some(other) => {
            eprintln!("error: METHOD `{other}` is not one of auto, dijkstra, hierarchy");
            std::process::exit(2);
        }
    };
    let started = std::time::Instant::now();
    let b = match hostcut::field::network::bench_grid(side, shape_points, stops, threads, method) {
        Ok(b) => b,
        Err(e) => {
            eprintln!("error: {e}");
            std::process::exit(i32::from(e.exit_code()));
        }
    };
    let total = started.elapsed().as_secs_f64();
    println!(
        "grid {side} x {side}, {shape_points} shape points between crossings: {} vertices, {} road pieces, {} graph nodes, {} arcs",
        b.nodes, b.road_pieces, b.graph_nodes, b.arcs
    );
    println!("stops: {} (+ depot), search threads: {threads}", b.stops);
    println!("build network:            {:.2} s", b.build_s);
    println!(
        "road travel matrix:       {:.2} s  (by {}; of it building the hierarchy {:.2} s, {} shortcuts)",
        b.travel_s,
        b.method.as_str(),
        b.preprocess_s,
        b.shortcuts
    );
    println!(
        "road tour + day split:    {:.2} s  ({:.1} h travel, {} days)",
        b.routes_s, b.road_tour_hours, b.road_days
    );
    println!("route geometry, all days: {:.2} s", b.geometry_s);
    println!(
        "straight-line matrix + tour + split: {:.2} s  ({:.1} h travel, {} days)",
        b.straight_s, b.straight_tour_hours, b.straight_days
    );
    println!("total:                    {total:.2} s");
    if let Some(mb) = peak_memory_mb() {
        println!("peak resident memory:     {mb:.0} MB");
    }
}
