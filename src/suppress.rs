//! Suppression comments: `# foldcheck: allow <rule>[, <rule>…] -- <reason>`.
//!
//! On a line of its own, a comment covers the YAML node that starts on the next line and
//! everything inside it; at the end of a line, the node that starts on that line. "The
//! node that starts on a line" is the outermost list item or mapping entry whose first
//! byte is on that line.

use crate::declared;
use crate::finding::Finding;
use crate::source::yaml::{Node, NodeKind};
use crate::source::{FileId, LineIndex, Span};

/// The marker that starts a suppression comment.
pub const MARKER: &str = "foldcheck:";

/// One suppression comment.
#[derive(Clone, Debug)]
pub struct Suppression {
    /// The comment.
    pub comment: Span,
    /// The rules it names.
    pub rules: Vec<String>,
    /// Its reason (may be empty: a finding).
    pub reason: String,
    /// The node it covers (None: nothing starts on that line).
    pub covers: Option<Span>,
    /// The key path of the node it covers (`channels/acc-1`), for the subject of the
    /// findings about this comment (see `crate::fingerprint`); empty when it covers
    /// nothing.
    pub covers_path: String,
    /// Whether it suppressed something.
    pub used: bool,
}

/// The byte ranges of the text's YAML comments (from `#` to the end of the line), as
/// the YAML parser reads them: a `#` inside a quoted or block scalar is text, not a
/// comment. Reading stops at a syntax error (the file's `yaml-syntax` finding says
/// where).
fn comments(text: &str) -> Vec<(usize, usize)> {
    use serde_saphyr::granit_parser::{Event, Parser};
    let mut out = Vec::new();
    for ev in Parser::new_from_str(text) {
        let Ok((event, span)) = ev else { break };
        if let Event::Comment(..) = event
            && let (Some(start), Some(end)) = (span.start.byte_offset(), span.end.byte_offset())
            && start < end
            && end <= text.len()
        {
            out.push((start, end));
        }
    }
    out
}

/// Scan a file's YAML comments for suppressions, and work out what each covers.
pub fn scan(
    file: FileId,
    text: &str,
    lines: &LineIndex,
    root: Option<&Node>,
) -> (Vec<Suppression>, Vec<Finding>) {
    let mut out = Vec::new();
    let mut findings = Vec::new();
    if !text.contains(MARKER) {
        return (out, findings);
    }
    // (line, span, the node's own span) of the nodes that start on a line, in document
    // order.
    let mut starts: Vec<(usize, Span, Span)> = Vec::new();
    if let Some(root) = root {
        collect(root, text, lines, &mut starts);
    }
    let line_of = |offset: usize| lines.line_col(text, offset).0;
    for (start, end) in comments(text) {
        let Some(rest) = text[start + 1..end].trim().strip_prefix(MARKER) else {
            continue;
        };
        let comment = Span::new(file, start, end);
        let rest = rest.trim();
        let line_start = text[..start].rfind(['\n', '\r']).map_or(0, |i| i + 1);
        let own_line = text[line_start..start]
            .chars()
            .all(|c| c.is_whitespace() || c == '\u{feff}');
        let target_line = if own_line {
            // The line of the first node that starts after the comment.
            starts
                .iter()
                .filter(|(_, s, _)| s.start as usize >= end)
                .min_by_key(|(_, s, _)| s.start)
                .map(|(l, _, _)| *l)
        } else {
            Some(line_of(start))
        };
        let covered = target_line.and_then(|l| {
            starts
                .iter()
                .filter(|(sl, _, _)| *sl == l)
                .max_by_key(|(_, s, _)| s.len())
                .map(|(_, s, own)| (*s, *own))
        });
        let covers = covered.map(|(s, _)| s);
        let covers_path = match (covered, root) {
            (Some((_, own)), Some(root)) => crate::fingerprint::key_path(root, own, text),
            _ => String::new(),
        };
        let Some(list) = rest.strip_prefix("allow") else {
            findings.push(
                declared::SUPPRESSION
                    .finding(
                        comment,
                        "not a suppression",
                        "a `foldcheck:` comment must read `foldcheck: allow <rule> -- <reason>`",
                    )
                    .with_subject(subject(&covers_path, &[]))
                    .with_help("write `# foldcheck: allow <rule>[, <rule>…] -- <reason>`"),
            );
            continue;
        };
        let (names, reason) = match list.split_once("--") {
            Some((n, r)) => (n, r.trim()),
            None => (list, ""),
        };
        let rules: Vec<String> = names
            .split(',')
            .map(|s| s.trim().to_string())
            .filter(|s| !s.is_empty())
            .collect();
        out.push(Suppression {
            comment,
            rules,
            reason: reason.to_string(),
            covers,
            covers_path,
            used: false,
        });
    }
    (out, findings)
}

/// The subject of a finding about a suppression comment: `suppression/<key path of the
/// node it covers>/<rule>[,<rule>…]` (docs/output.md, "Fingerprints").
fn subject(covers_path: &str, rules: &[String]) -> String {
    format!("suppression/{covers_path}/{}", rules.join(","))
}

fn collect(node: &Node, text: &str, lines: &LineIndex, out: &mut Vec<(usize, Span, Span)>) {
    let line_of = |s: &Span| lines.line_col(text, s.start as usize).0;
    match &node.kind {
        NodeKind::Seq(items) => {
            for item in items {
                // A list item starts at its dash: back up over "- " to include it.
                let mut start = item.span.start as usize;
                let bytes = text.as_bytes();
                let mut i = start;
                while i > 0 && bytes[i - 1] == b' ' {
                    i -= 1;
                }
                if i > 0 && bytes[i - 1] == b'-' {
                    start = i - 1;
                }
                let span = Span {
                    start: start as u32,
                    ..item.span
                };
                out.push((line_of(&span), span, item.span));
                collect(item, text, lines, out);
            }
        }
        NodeKind::Map(entries) => {
            for (k, v) in entries {
                let span = k.span.join(&v.span);
                out.push((line_of(&span), span, span));
                collect(v, text, lines, out);
            }
        }
        _ => {}
    }
}

/// Mark findings covered by suppressions, and report unused or malformed suppressions.
pub fn apply(sups: &mut [Suppression], findings: &mut [Finding], out: &mut Vec<Finding>) {
    for s in sups.iter_mut() {
        let input: Vec<String> = s
            .rules
            .iter()
            .filter(|r| crate::finding::is_input_rule(r))
            .cloned()
            .collect();
        if !input.is_empty() {
            out.push(
                declared::SUPPRESSION.finding(
s.comment, "cannot be suppressed",
                    format!(
                        "{} {}, which a comment cannot suppress",
                        input
                            .iter()
                            .map(|r| format!("`{r}`"))
                            .collect::<Vec<_>>()
                            .join(", "),
                        if input.len() == 1 {
                            "is an input rule"
                        } else {
                            "are input rules"
                        }
                    ),
                )
                .with_subject(subject(&s.covers_path, &s.rules))
                .with_help("fix the value instead: input rules say the file could not be read as a rig, so they are always errors"),
            );
            s.rules.retain(|r| !crate::finding::is_input_rule(r));
            if s.rules.is_empty() {
                continue;
            }
        }
        let unknown: Vec<&String> = s
            .rules
            .iter()
            .filter(|r| crate::rules::rule(r).is_none())
            .collect();
        if s.rules.is_empty() {
            out.push(
                declared::SUPPRESSION
                    .finding(s.comment, "names no rule", "the suppression names no rule")
                    .with_subject(subject(&s.covers_path, &s.rules))
                    .with_help("write `# foldcheck: allow <rule> -- <reason>`"),
            );
            continue;
        }
        if let Some(u) = unknown.first() {
            let hint = crate::words::closest(u, crate::rules::RULES.iter().map(|r| r.name))
                .map(|b| format!("did you mean `{b}`?"))
                .unwrap_or_else(|| "`foldcheck rules` lists the rules".to_string());
            out.push(
                declared::SUPPRESSION
                    .finding(
                        s.comment,
                        "unknown rule",
                        format!("the suppression names `{u}`, which is not a rule"),
                    )
                    .with_subject(subject(&s.covers_path, &s.rules))
                    .with_help(hint),
            );
            continue;
        }
        if s.reason.is_empty() {
            out.push(
                declared::SUPPRESSION.finding(
s.comment, "no reason", "the suppression gives no reason")
                    .with_subject(subject(&s.covers_path, &s.rules))
                .with_help("add the reason after `--`, e.g. `-- reviewed with the test lead, band is nominal`"),
            );
            continue;
        }
        let Some(covers) = s.covers else {
            out.push(
                declared::SUPPRESSION
                    .finding(
                        s.comment,
                        "covers nothing",
                        "the suppression covers no YAML node",
                    )
                    .with_subject(subject(&s.covers_path, &s.rules))
                    .with_help(
                        "put it on the line above the node, or at the end of the node's first line",
                    ),
            );
            continue;
        };
        for f in findings.iter_mut() {
            if f.suppressed.is_none()
                && s.rules.iter().any(|r| r == f.rule)
                && covers.contains(&f.primary.span)
            {
                f.suppressed = Some(s.reason.clone());
                s.used = true;
            }
        }
        if !s.used {
            out.push(
                declared::SUPPRESSION
                    .finding(
                        s.comment,
                        "suppresses nothing",
                        format!(
                            "the suppression of {} suppresses nothing",
                            s.rules
                                .iter()
                                .map(|r| format!("`{r}`"))
                                .collect::<Vec<_>>()
                                .join(", ")
                        ),
                    )
                    .with_label(covers, "covers this")
                    .with_subject(subject(&s.covers_path, &s.rules))
                    .with_help("remove it: the finding it was for is gone"),
            );
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn own_line_comment_covers_the_next_item() {
        let text = "channels:\n  # foldcheck: allow nyquist -- accepted for the shaker survey\n  - name: a\n    band: 2 kHz\n  - name: b\n";
        let idx = LineIndex::new(text);
        let root = crate::source::yaml::parse(0, text, &idx).unwrap();
        let (sups, f) = scan(0, text, &idx, Some(&root));
        assert!(f.is_empty());
        assert_eq!(sups.len(), 1);
        let c = sups[0].covers.unwrap();
        assert_eq!(
            &text[c.start as usize..c.end as usize],
            "- name: a\n    band: 2 kHz"
        );
        assert_eq!(sups[0].reason, "accepted for the shaker survey");
    }

    #[test]
    fn trailing_comment_covers_its_line_and_hash_in_quotes_is_not_a_comment() {
        let text = "a: '# foldcheck: allow x'\nb: 1 # foldcheck: allow nyquist -- why\n";
        let idx = LineIndex::new(text);
        let root = crate::source::yaml::parse(0, text, &idx).unwrap();
        let (sups, _) = scan(0, text, &idx, Some(&root));
        assert_eq!(sups.len(), 1);
        let c = sups[0].covers.unwrap();
        assert_eq!(&text[c.start as usize..c.end as usize], "b: 1");
    }
}
