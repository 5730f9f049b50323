//! What a loaded board should tell the user although it is legal: nets the router will
//! skip because they join fewer than two pins.

use super::board::Design;
use super::text::escape_controls;

/// At most this many net names are listed in one warning; the rest are counted.
const MAX_NAMED: usize = 10;

/// Warnings about a checked board, one line each (empty for an ordinary board).
pub fn warnings(design: &Design) -> Vec<String> {
    let mut out = Vec::new();
    let with = |count: usize| -> Vec<&str> {
        design
            .board
            .nets
            .iter()
            .zip(&design.net_pins)
            .filter(|(_, pins)| pins.len() == count)
            .map(|(net, _)| net.name.as_str())
            .collect()
    };
    let single = with(1);
    if !single.is_empty() {
        out.push(format!(
            "{} net{} with a single pin need{} no wiring and {} skipped by the router: {}",
            single.len(),
            plural(single.len()),
            if single.len() == 1 { "s" } else { "" },
            if single.len() == 1 { "is" } else { "are" },
            names(&single)
        ));
    }
    let empty = with(0);
    if !empty.is_empty() {
        out.push(format!(
            "{} net{} without pins {} skipped by the router: {}",
            empty.len(),
            plural(empty.len()),
            if empty.len() == 1 { "is" } else { "are" },
            names(&empty)
        ));
    }
    out
}

fn plural(n: usize) -> &'static str {
    if n == 1 { "" } else { "s" }
}

/// The names quoted, escaped and comma-separated, at most [`MAX_NAMED`] of them.
fn names(list: &[&str]) -> String {
    let mut s = list
        .iter()
        .take(MAX_NAMED)
        .map(|n| format!("\"{}\"", escape_controls(n)))
        .collect::<Vec<_>>()
        .join(", ");
    if list.len() > MAX_NAMED {
        s.push_str(&format!(" and {} more", list.len() - MAX_NAMED));
    }
    s
}
