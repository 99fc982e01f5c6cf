//! The geometric-program solver on the elmore method's own programs, in-process: for a set of gates
//! at fixed and fan-out loads, the program the method last solves for its default delay target and
//! for the least worst ratio within the cap (`sizing::elmore::optimum`), each solved by
//! `optimize::geometric::solve` many times (best of several rounds after a warm-up). The programs,
//! with the optimum and the time per solve, are written as JSON to a file (a temporary one unless
//! `--json PATH` is given), which `python3 benches/scipy_geometric.py` solves again with scipy.
//!
//! Run with `cargo bench --bench geometric [-- --json PATH] [--only TEXT]`.

#![forbid(unsafe_code)]

/// The binary's allocator, so that the figures are the binary's.
#[global_allocator]
static ALLOCATOR: mimalloc::MiMalloc = mimalloc::MiMalloc;

mod support;

use std::hint::black_box;

use support::best_of;
use widthwise::budget::Meter;
use widthwise::optimize::geometric::{self, Outcome, Program};
use widthwise::size_text;
use widthwise::sizing::target::{Goal, classic_ratio};
use widthwise::sizing::{Conditions, Load, Method, Plan, elmore};

/// Gates and their loads (unit-NMOS gate capacitances, or a fan-out of copies of the gate's input),
/// with the diffusion ratio.
const CASES: [(&str, Load, f64); 14] = [
    ("nand2", Load::Units(8.0), 1.0),
    ("nand3", Load::Units(20.0), 1.0),
    ("nand4", Load::Fanout(4.0), 1.0),
    ("nor2", Load::Units(10.0), 0.5),
    ("nor3", Load::Fanout(4.0), 1.0),
    ("aoi21", Load::Units(12.0), 1.0),
    ("aoi22", Load::Units(60.0), 0.7),
    ("aoi221", Load::Fanout(4.0), 1.0),
    ("oai21", Load::Fanout(6.0), 1.0),
    ("oai22", Load::Units(30.0), 0.7),
    ("oai321", Load::Fanout(4.0), 1.0),
    ("!(a & (b | c))", Load::Units(15.0), 1.0),
    ("!(a & b | c & (d | e))", Load::Fanout(4.0), 1.0),
    ("!((a | b | c) & (d | e | f) & (g | h | i))", Load::Units(150.0), 1.0),
];

fn plan(method: Method, load: Load, diffusion_ratio: f64) -> Plan {
    Plan { conditions: Conditions { load, diffusion_ratio }, ..Plan::new(method, 2.0, 1.0, None) }
}

/// The elmore method's last programs for one case: its default target's and the least worst ratio's.
fn programs(text: &str, load: Load, diffusion_ratio: f64) -> Vec<(String, Program)> {
    let elmore_plan = plan(Method::ELMORE, load, diffusion_ratio);
    let structure = size_text(text, &plan(Method::LongestPath, load, diffusion_ratio)).expect("the gate sizes");
    let meter = Meter::unlimited();
    let classic = classic_ratio(structure.stage(), &elmore_plan, &meter).expect("a delay target");
    let mut found = Vec::new();
    for (label, goal) in [("target", Goal::Area { ratio: classic }), ("fastest", Goal::Ratio)] {
        match elmore::optimum(structure.stage(), &elmore_plan, goal, None, &meter) {
            Ok(optimum) => found.push((format!("{text} {load:?} {label}"), optimum.program)),
            Err(error) => println!("  {text} {load:?} {label}: no program ({error})"),
        }
    }
    found
}

#[derive(serde::Serialize)]
struct Solved {
    name: String,
    program: Program,
    /// The objective at our optimum.
    objective: f64,
    /// Seconds per solve, in-process.
    seconds: f64,
}

fn main() {
    let arguments: Vec<String> = std::env::args().collect();
    let path = arguments.iter().position(|a| a == "--json").and_then(|at| arguments.get(at + 1)).map_or_else(
        || std::env::temp_dir().join(format!("widthwise-geometric-{}.json", std::process::id())),
        std::path::PathBuf::from,
    );
    // `--only TEXT`: only the programs whose name contains TEXT (to profile one).
    let only = arguments.iter().position(|a| a == "--only").and_then(|at| arguments.get(at + 1)).cloned();
    println!("the elmore method's geometric programs, solved in-process by optimize::geometric::solve");
    let mut solved = Vec::new();
    let mut times = Vec::new();
    for (text, load, ratio) in CASES {
        for (name, program) in programs(text, load, ratio) {
            if only.as_ref().is_some_and(|only| !name.contains(only.as_str())) {
                continue;
            }
            let Outcome::Optimal { objective, .. } = geometric::solve(&program).expect("it solves") else {
                println!("  {name}: infeasible, left out");
                continue;
            };
            let repeats = if only.is_some() { 2000 } else { 20 };
            let time = best_of(10, || {
                for _ in 0..repeats {
                    black_box(geometric::solve(black_box(&program)).expect("it solves"));
                }
            }) / repeats;
            println!(
                "  {name:<62} {:>3} variables {:>3} constraints {:>9.2} us",
                program.variables,
                program.constraints.len() + program.hard.len(),
                time.as_secs_f64() * 1e6
            );
            times.push(time);
            solved.push(Solved { name, program, objective, seconds: time.as_secs_f64() });
        }
    }
    times.sort();
    println!("  median {:.2} us per program", times[times.len() / 2].as_secs_f64() * 1e6);
    let json = serde_json::to_vec(&solved).expect("programs serialise");
    std::fs::write(&path, json).expect("the programs are written");
    println!("programs written to {}", path.display());
}
