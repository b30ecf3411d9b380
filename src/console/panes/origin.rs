//! The origin pane: where the selected unbound candidate comes from (the same sheet the `origin`
//! command prints), with its Galactic orbit drawn in (R, z) to fit the pane's width.

use crate::console::state::App;
use crate::origin_text::{heading, rz_drawing, sheet_lines};

/// The pane's lines for a panel `width` characters wide.
pub fn lines(app: &App, width: u16) -> Vec<String> {
    let Some(c) = app.selected_candidate() else {
        return vec!["no candidate selected".into()];
    };
    let mut out = vec![heading(&c.fit)];
    let Some(o) = &c.fit.origin else {
        out.push("no origin sheet: P(unbound) is below 0.01 or not known yet".into());
        return out;
    };
    let w = usize::from(width).max(20);
    out.extend(sheet_lines(o).iter().flat_map(|l| wrap(l, w)));
    if !o.path.is_empty() {
        out.push(String::new());
        let cols = usize::from(width.saturating_sub(4)).clamp(20, 100);
        out.extend(rz_drawing(&o.path, (o.r0_kpc, o.z0_kpc), cols, 8));
    }
    out
}

/// Break a line at spaces so that no piece is wider than `width` characters; continuations are
/// indented by four spaces.
fn wrap(line: &str, width: usize) -> Vec<String> {
    let mut out = Vec::new();
    let mut cur = String::new();
    let mut fresh = true;
    for word in line.split(' ') {
        let len = cur.chars().count();
        if !fresh && len + 1 + word.chars().count() > width {
            out.push(std::mem::replace(&mut cur, "    ".into()));
            fresh = true;
        }
        if !fresh {
            cur.push(' ');
        }
        cur.push_str(word);
        fresh = false;
    }
    out.push(cur);
    out
}

#[cfg(test)]
mod tests {
    use super::wrap;

    #[test]
    fn long_lines_break_at_spaces_within_the_width() {
        let w = wrap("one two three four five six seven", 10);
        assert!(w.iter().all(|l| l.chars().count() <= 10), "{w:?}");
        assert_eq!(w.join(" ").split_whitespace().count(), 7);
        assert_eq!(wrap("short", 10), vec!["short".to_string()]);
    }
}
