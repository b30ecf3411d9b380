//! Strings read from files are untrusted: before anything reaches a terminal, escape sequences and
//! control characters are removed (a crafted tracklet id must not be able to repaint or retitle the
//! observer's screen).

use unicode_width::UnicodeWidthChar;

/// Remove ANSI/VT escape sequences (CSI, OSC, DCS and two-byte ESC forms) and every C0/C1 control
/// character and DEL; tabs become spaces.
pub fn clean(s: &str) -> String {
    let mut out = String::with_capacity(s.len());
    let mut chars = s.chars().peekable();
    while let Some(c) = chars.next() {
        match c {
            '\u{1b}' => skip_escape(&mut chars),
            // C1 CSI/OSC/DCS introducers in their 8-bit form.
            '\u{9b}' => skip_until_final(&mut chars),
            '\u{9d}' | '\u{90}' | '\u{9e}' | '\u{9f}' => skip_string(&mut chars),
            '\t' => out.push(' '),
            c if c.is_control() => {}
            // Bidirectional overrides can make text read differently from what it is.
            '\u{202a}'..='\u{202e}' | '\u{2066}'..='\u{2069}' => {}
            // Invisible format characters (zero-width spaces and joiners, soft hyphen, word joiners,
            // marks and tags) make two ids that look alike differ, or one look like another.
            c if invisible(c) => {}
            // Combining marks and other zero-width characters: the terminal draws them onto the
            // previous cell, which the screen buffer does not know, and stale cells follow.
            c if UnicodeWidthChar::width(c) == Some(0) => {}
            c => out.push(c),
        }
    }
    out
}

/// Unicode format characters (general category Cf) and the other invisible fillers.
fn invisible(c: char) -> bool {
    matches!(c,
        '\u{00ad}' | '\u{034f}' | '\u{061c}' | '\u{115f}' | '\u{1160}' | '\u{17b4}' | '\u{17b5}'
        | '\u{180b}'..='\u{180f}' | '\u{200b}'..='\u{200f}' | '\u{2028}' | '\u{2029}'
        | '\u{2060}'..='\u{206f}' | '\u{3164}' | '\u{fe00}'..='\u{fe0f}' | '\u{feff}'
        | '\u{ffa0}' | '\u{fff0}'..='\u{fffb}' | '\u{0600}'..='\u{0605}' | '\u{06dd}'
        | '\u{070f}' | '\u{0890}' | '\u{0891}' | '\u{08e2}' | '\u{110bd}' | '\u{110cd}'
        | '\u{13430}'..='\u{1343f}' | '\u{1bca0}'..='\u{1bca3}' | '\u{1d173}'..='\u{1d17a}'
        | '\u{e0000}'..='\u{e0fff}')
}

/// An object id from a file, safe to show in one terminal cell per character, and one-to-one with
/// the raw id: every character that is not printable ASCII (controls, escape bytes, invisible format
/// characters, letters of other scripts, which some terminals draw two cells wide) is written as `~`
/// and its code point in hex and `;` (`K27D\u{200b}x09` becomes `K27D~200b;x09`), and `~` itself as
/// `~7e;`. Ids that differ only in what cleaning removes thus stay distinct objects, visibly altered,
/// and no id can be made to merge with another (a fingerprint could be forced to collide).
pub fn clean_id(raw: &str) -> String {
    // Ids are ASCII by the standards: anything else (also letters some terminals draw two cells
    // wide) is written by its code point.
    let kept = |ch: char| ch != '~' && (ch.is_ascii_graphic() || ch == ' ');
    let mut out = String::with_capacity(raw.len());
    for ch in raw.chars() {
        if kept(ch) {
            out.push(ch);
        } else {
            out.push_str(&format!("~{:x};", u32::from(ch)));
        }
    }
    out
}

/// A file's name as the feed keys and shows it, one-to-one with the path's bytes: a byte that is not
/// UTF-8 is written `~` hex `;` and `~` itself `~7e;` (two names that differ only in such bytes are
/// two files, not one that replaces the other).
pub fn path_name(p: &std::path::Path) -> String {
    use std::os::unix::ffi::OsStrExt;
    let mut out = String::new();
    for chunk in p.as_os_str().as_bytes().utf8_chunks() {
        for ch in chunk.valid().chars() {
            if ch == '~' {
                out.push_str("~7e;");
            } else {
                out.push(ch);
            }
        }
        for b in chunk.invalid() {
            out.push_str(&format!("~{b:02x};"));
        }
    }
    out
}

fn skip_escape(chars: &mut std::iter::Peekable<std::str::Chars>) {
    match chars.next() {
        Some('[') => skip_until_final(chars),
        Some(']') | Some('P') | Some('X') | Some('^') | Some('_') => skip_string(chars),
        _ => {}
    }
}

/// CSI: parameters and intermediates up to a final byte in @..~.
fn skip_until_final(chars: &mut std::iter::Peekable<std::str::Chars>) {
    for c in chars.by_ref() {
        if ('@'..='~').contains(&c) {
            break;
        }
    }
}

/// OSC/DCS and friends: up to BEL or ESC \ (string terminator).
fn skip_string(chars: &mut std::iter::Peekable<std::str::Chars>) {
    while let Some(c) = chars.next() {
        if c == '\u{7}' || c == '\u{9c}' {
            break;
        }
        if c == '\u{1b}' {
            if chars.peek() == Some(&'\\') {
                chars.next();
            }
            break;
        }
    }
}

#[cfg(test)]
mod tests {
    #[test]
    fn ids_are_one_cell_per_character_however_they_were_written() {
        use unicode_width::UnicodeWidthStr;
        for raw in ["K27De\u{301}x", "観測01", "K27D\u{200b}x09", "ＡＢＣ12"] {
            let id = super::clean_id(raw);
            assert_eq!(id.width(), id.chars().count(), "{raw:?} -> {id:?}");
            assert!(
                id.contains('~'),
                "{raw:?} changed without a fingerprint: {id:?}"
            );
        }
        assert_eq!(super::clean_id("qka2e7f"), "qka2e7f");
    }

    #[test]
    fn combining_marks_are_dropped_from_display_text() {
        assert_eq!(super::clean("e\u{301}te\u{300}"), "ete");
        assert_eq!(super::clean("été"), "été");
    }

    use super::clean;

    #[test]
    fn escape_sequences_and_controls_are_removed() {
        assert_eq!(clean("ab\u{1b}[31mred\u{1b}[0m"), "abred");
        assert_eq!(clean("x\u{1b}]0;pwned\u{7}y"), "xy");
        assert_eq!(
            clean("x\u{1b}]8;;http://e\u{1b}\\link\u{1b}]8;;\u{1b}\\y"),
            "xlinky"
        );
        assert_eq!(clean("a\rb\u{8}c\u{0}d\u{7f}e"), "abcde");
        assert_eq!(clean("a\u{9b}2Jb"), "ab");
        assert_eq!(clean("tab\there"), "tab here");
        assert_eq!(clean("\u{202e}evil"), "evil");
        assert_eq!(clean("plain K26-ab.01 ü"), "plain K26-ab.01 ü");
    }

    #[test]
    fn invisible_format_characters_are_removed() {
        assert_eq!(clean("K27D\u{200b}x09"), "K27Dx09");
        assert_eq!(
            clean("a\u{00ad}b\u{2060}c\u{feff}d\u{2067}e\u{e0041}f"),
            "abcdef"
        );
    }

    #[test]
    fn ids_that_differ_only_in_removed_characters_stay_distinct() {
        use super::clean_id;
        assert_eq!(clean_id("qka2e7f"), "qka2e7f");
        assert_eq!(clean_id("K26 ab-01.x"), "K26 ab-01.x");
        let a = clean_id("K27D\u{200b}x09");
        let b = clean_id("K27Dx\u{200b}09");
        assert_eq!((a.as_str(), b.as_str()), ("K27D~200b;x09", "K27Dx~200b;09"));
        let escapes: std::collections::BTreeSet<String> = (0..8)
            .map(|k| clean_id(&format!("X\u{1b}[{k}mY")))
            .collect();
        assert_eq!(escapes.len(), 8, "{escapes:?}");
        assert!(escapes.iter().all(|e| !e.contains('\u{1b}')));
    }

    /// Regression: the watcher keyed files by their lossy names, so `obs\xff.psv` and `obs\xfe.psv` were
    /// one file, each replacing the other's observations.
    #[test]
    fn file_names_that_differ_only_in_bytes_that_are_not_utf8_stay_two_names() {
        use std::os::unix::ffi::OsStrExt;
        let name =
            |b: &[u8]| super::path_name(std::path::Path::new(std::ffi::OsStr::from_bytes(b)));
        assert_eq!(name(b"obs\xff.psv"), "obs~ff;.psv");
        assert_ne!(name(b"obs\xff.psv"), name(b"obs\xfe.psv"));
        assert_ne!(name(b"obs\xff.psv"), name(b"obs~ff;.psv"));
        assert_eq!(name(b"dir/001_a.psv"), "dir/001_a.psv");
    }

    /// Regression: a raw id already written as a cleaned one (`K27Dx09~6c7edd`) merged with the id it
    /// imitated, and a 24-bit fingerprint could be made to collide. The escaped form is one-to-one.
    #[test]
    fn no_two_raw_ids_give_the_same_id() {
        use super::clean_id;
        let raws = [
            "K27D\u{200b}x09",
            "K27D~200b;x09",
            "K27Dx09~6c7edd",
            "K27Dx09",
            "K27D\u{2060}x09",
            "K27D\u{feff}x09",
            "K27D~7e;200b;x09",
            "~",
            "~7e;",
        ];
        let ids: std::collections::BTreeSet<String> = raws.iter().map(|r| clean_id(r)).collect();
        assert_eq!(ids.len(), raws.len(), "{ids:?}");
    }
}
