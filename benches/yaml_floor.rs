//! The YAML floor under foldcheck's benchmark (`bench/run.sh`): how long it takes only
//! to read and parse the same files, three ways.
//!
//! ```text
//! yaml_floor MODE PATH...
//!   tree     foldcheck's own YAML front end (`source::yaml::parse`: the tree of spanned
//!            nodes, built straight from events in the common case): the first stage of
//!            a lint, and the floor of its design
//!   scan     the block-style scanner alone (the first reader `parse` tries), failing
//!            on a file it declines: shows that `tree` timed the scanner
//!   saphyr   the same tree through serde-saphyr alone (the reader `parse` falls back to)
//!   events   serde-saphyr's event parser (granit-parser) alone: every event with its
//!            span, no tree, no serde
//!   libyaml  libyaml (unsafe-libyaml, a translation of the C library) events with
//!            marks: the event rate of the best-known span-capable YAML parser
//! ```
//!
//! Files (`*.yaml`, `*.yml` under each PATH) are read and parsed in parallel with rayon,
//! as `foldcheck check` does. It prints one line: `MODE files bytes events seconds`.
//! Run through `cargo bench --bench yaml_floor -- MODE PATH...`; without arguments it
//! prints its usage (so a plain `cargo bench` passes).

use rayon::prelude::*;
use std::path::{Path, PathBuf};
use std::time::Instant;

fn yaml_files(root: &Path, out: &mut Vec<PathBuf>) {
    if root.is_file() {
        out.push(root.to_path_buf());
        return;
    }
    let Ok(entries) = std::fs::read_dir(root) else {
        return;
    };
    let mut entries: Vec<PathBuf> = entries.filter_map(|e| e.ok().map(|e| e.path())).collect();
    entries.sort();
    for p in entries {
        if p.is_dir() {
            yaml_files(&p, out);
        } else if p.extension().is_some_and(|e| e == "yaml" || e == "yml") {
            out.push(p);
        }
    }
}

/// foldcheck's YAML stage: the spanned tree the rest of the pipeline reads.
fn tree(text: &str) -> Result<u64, String> {
    let lines = foldcheck::source::LineIndex::new(text);
    let root = foldcheck::source::yaml::parse(0, text, &lines).map_err(|e| e.message)?;
    Ok(count(&root))
}

/// The block-style scanner alone, with the parallel reading of a long top-level list
/// that `parse` uses.
fn scan(text: &str) -> Result<u64, String> {
    let split = Some((
        foldcheck::source::yaml::PARALLEL_BYTES,
        foldcheck::source::yaml::ITEMS_PER_TASK,
    ));
    let root = foldcheck::source::yaml::block_reader(0, text, split)
        .ok_or_else(|| "the block-style scanner declines this file".to_string())?;
    Ok(count(&root))
}

/// The tree through serde-saphyr alone.
fn saphyr(text: &str) -> Result<u64, String> {
    let lines = foldcheck::source::LineIndex::new(text);
    let root = foldcheck::source::yaml::parse_with_serde(0, text, &lines).map_err(|e| e.message)?;
    Ok(count(&root))
}

fn count(n: &foldcheck::source::yaml::Node) -> u64 {
    use foldcheck::source::yaml::NodeKind;
    1 + match &n.kind {
        NodeKind::Seq(items) => items.iter().map(count).sum(),
        NodeKind::Map(entries) => entries.iter().map(|(k, v)| count(k) + count(v)).sum(),
        _ => 0,
    }
}

/// granit-parser events with spans (the parser under serde-saphyr).
fn events(text: &str) -> Result<u64, String> {
    use serde_saphyr::granit_parser::Parser;
    let mut n = 0u64;
    let mut last = 0usize;
    for ev in Parser::new_from_str(text) {
        let (_, span) = ev.map_err(|e| e.to_string())?;
        last = last.max(span.end.index());
        n += 1;
    }
    std::hint::black_box(last);
    Ok(n)
}

/// libyaml events with marks.
fn libyaml(text: &str) -> Result<u64, String> {
    use std::mem::MaybeUninit;
    use unsafe_libyaml as unsafe_y;
    let mut n = 0u64;
    let mut last = 0u64;
    // SAFETY: the parser is initialised before use and deleted once; each event is
    // deleted after it is read; the input outlives the parser.
    unsafe {
        let mut parser = MaybeUninit::<unsafe_y::yaml_parser_t>::uninit();
        if unsafe_y::yaml_parser_initialize(parser.as_mut_ptr()).fail {
            return Err("libyaml: cannot initialise the parser".to_string());
        }
        let parser = parser.as_mut_ptr();
        unsafe_y::yaml_parser_set_input_string(parser, text.as_ptr(), text.len() as u64);
        let result = loop {
            let mut event = MaybeUninit::<unsafe_y::yaml_event_t>::uninit();
            if unsafe_y::yaml_parser_parse(parser, event.as_mut_ptr()).fail {
                break Err("libyaml: the file does not parse".to_string());
            }
            let event = event.as_mut_ptr();
            n += 1;
            last = last.max((*event).end_mark.index);
            let end = (*event).type_ == unsafe_y::YAML_STREAM_END_EVENT;
            unsafe_y::yaml_event_delete(event);
            if end {
                break Ok(n);
            }
        };
        unsafe_y::yaml_parser_delete(parser);
        std::hint::black_box(last);
        result
    }
}

fn main() {
    let args: Vec<String> = std::env::args()
        .skip(1)
        .filter(|a| a != "--bench")
        .collect();
    let Some((mode, paths)) = args.split_first() else {
        eprintln!("usage: yaml_floor tree|scan|saphyr|events|libyaml PATH...");
        return;
    };
    let parse: fn(&str) -> Result<u64, String> = match mode.as_str() {
        "tree" => tree,
        "scan" => scan,
        "saphyr" => saphyr,
        "events" => events,
        "libyaml" => libyaml,
        other => {
            eprintln!("yaml_floor: unknown mode `{other}`");
            std::process::exit(2);
        }
    };
    let start = Instant::now();
    let mut files = Vec::new();
    for p in paths {
        yaml_files(Path::new(p), &mut files);
    }
    let results: Vec<Result<(u64, u64), String>> = files
        .par_iter()
        .map(|p| {
            let text = std::fs::read_to_string(p).map_err(|e| format!("{}: {e}", p.display()))?;
            let n = parse(&text).map_err(|e| format!("{}: {e}", p.display()))?;
            Ok((text.len() as u64, n))
        })
        .collect();
    let (mut bytes, mut count) = (0u64, 0u64);
    for r in results {
        match r {
            Ok((b, n)) => {
                bytes += b;
                count += n;
            }
            Err(e) => {
                eprintln!("yaml_floor: {e}");
                std::process::exit(1);
            }
        }
    }
    println!(
        "{mode} {} {bytes} {count} {:.6}",
        files.len(),
        start.elapsed().as_secs_f64()
    );
}
