//! Strings read from files are untrusted: before anything reaches a terminal, escape sequences and
//! control characters are removed (a crafted tracklet id must not be able to repaint or retitle the
//! observer's screen).

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
            c => out.push(c),
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
}
