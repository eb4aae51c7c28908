//! Where the time of `foldcheck inspect FILE CHANNEL` goes, stage by stage, so that a
//! small and a large rig can be compared side by side (`bench/inspect.py --stages`
//! runs it on a 30- and a 3 000-channel rig and prints the ratios).
//!
//!     inspect_stages RIG CHANNEL REPEATS [CATALOG...]
//!
//! Each stage is timed on its own, in one process, repeated; the output is one line per
//! stage, `stage<TAB>median milliseconds`. The stages are those of the pipeline `inspect`
//! runs: reading the files, the line index, the YAML tree, suppression comments, the
//! schema check, the model, resolution (with the catalogs), the analysis of the shown
//! channel and its group (`analysis::analyse_only`, what `inspect` runs) beside the
//! whole rig's (`analysis::analyse_rig`, what `check` runs), the rules on the scoped
//! analysis, dropping what was built (in the order the pipeline drops it), and the whole
//! `inspect::run` in process.

use foldcheck::analysis::{self, Context, Enabled};
use foldcheck::model::{Role, build, schema};
use foldcheck::resolve::ThresholdSettings;
use foldcheck::source::{LineIndex, yaml};
use std::path::Path;
use std::time::Instant;

const STAGES: [&str; 15] = [
    "read",
    "line index",
    "yaml tree",
    "suppressions",
    "schema",
    "model",
    "resolve",
    "analysis (scoped)",
    "analysis (whole rig)",
    "rules (scoped)",
    "drop: rig and analysis",
    "drop: model",
    "drop: YAML trees and texts",
    "inspect::run",
    "total of the stages inspect runs",
];

fn main() {
    let args: Vec<String> = std::env::args()
        .skip(1)
        .filter(|a| a != "--bench")
        .collect();
    let [rig_path, channel, repeats, catalogs @ ..] = args.as_slice() else {
        // `cargo test --all-targets` runs every bench without arguments: say how to use it
        // and pass, as the other benches do.
        eprintln!("usage: inspect_stages RIG CHANNEL REPEATS [CATALOG...]");
        return;
    };
    let repeats: usize = repeats.parse().expect("REPEATS is a whole number");
    let mut times: Vec<Vec<f64>> = vec![Vec::new(); STAGES.len()];
    let ms = |t: Instant| t.elapsed().as_secs_f64() * 1e3;
    for _ in 0..repeats {
        let mut lap = [0.0f64; STAGES.len()];
        let t = Instant::now();
        let text = std::fs::read_to_string(rig_path).expect("the rig reads");
        let ctexts: Vec<String> = catalogs
            .iter()
            .map(|c| std::fs::read_to_string(c).expect("the catalog reads"))
            .collect();
        lap[0] = ms(t);

        let t = Instant::now();
        let lines = LineIndex::new(&text);
        let clines: Vec<LineIndex> = ctexts.iter().map(|c| LineIndex::new(c)).collect();
        lap[1] = ms(t);

        let t = Instant::now();
        let root = yaml::parse(0, &text, &lines).expect("the rig parses");
        let croots: Vec<_> = ctexts
            .iter()
            .zip(&clines)
            .enumerate()
            .map(|(i, (c, l))| yaml::parse(i as u32 + 1, c, l).expect("the catalog parses"))
            .collect();
        lap[2] = ms(t);

        let t = Instant::now();
        let sup = foldcheck::suppress::scan(0, &text, &lines, Some(&root));
        lap[3] = ms(t);

        let t = Instant::now();
        let sch = schema::check(&root, &text);
        lap[4] = ms(t);

        let t = Instant::now();
        let (doc, quantity) = build::build(0, &text, Role::Rig, &root);
        let cdocs: Vec<_> = croots
            .iter()
            .zip(&ctexts)
            .enumerate()
            .map(|(i, (r, c))| build::build(i as u32 + 1, c, Role::Catalog, r).0)
            .collect();
        lap[5] = ms(t);

        let t = Instant::now();
        let mut docs = vec![&doc];
        docs.extend(cdocs.iter());
        let (rig, resolve_findings, _) =
            foldcheck::resolve::resolve_incomplete(&docs, &ThresholdSettings::default(), false);
        lap[6] = ms(t);

        let ci = rig.channel(channel).expect("the rig has the channel");
        let ctx = Context::new(Enabled::ALL).with_fixes(true);
        let t = Instant::now();
        let scope = rig.scope_of(ci);
        let scoped = analysis::analyse_only(&rig, &scope, &ctx);
        lap[7] = ms(t);

        let t = Instant::now();
        let whole = analysis::analyse_rig(&rig, &ctx);
        lap[8] = ms(t);
        drop(whole);

        let t = Instant::now();
        let found = foldcheck::rules::check_analysis(&scoped, |_| true);
        lap[9] = ms(t);

        let t = Instant::now();
        drop((found, scoped));
        drop((rig, resolve_findings, docs));
        lap[10] = ms(t);
        let t = Instant::now();
        drop((cdocs, doc, quantity, sch, sup));
        lap[11] = ms(t);
        let t = Instant::now();
        drop((croots, root, clines, lines, ctexts, text));
        lap[12] = ms(t);

        let t = Instant::now();
        let shown = foldcheck::inspect::run(Path::new(rig_path), Some(channel), None, false, None)
            .expect("inspect answers");
        std::hint::black_box(&shown);
        lap[13] = ms(t);

        // Everything but the whole rig's analysis, which `inspect` does not run.
        lap[14] = lap[..8].iter().sum::<f64>() + lap[9..13].iter().sum::<f64>();
        for (i, v) in lap.iter().enumerate() {
            times[i].push(*v);
        }
    }
    for (name, mut ts) in STAGES.iter().zip(times) {
        ts.sort_by(f64::total_cmp);
        println!("{name}\t{:.3}", ts[ts.len() / 2]);
    }
}
