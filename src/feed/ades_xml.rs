//! ADES XML (the IAU Astrometry Data Exchange Standard, XML form): an `ades` root holding `optical`
//! records, directly or inside `obsBlock`/`obsData`. Read as a stream (one record in memory at a time),
//! each record's child elements become the same named fields the PSV reader takes, so both forms share
//! one set of checks and messages. Errors carry the line of the record (or of the broken markup).
//! Document type declarations are refused: they are never needed for ADES and are the door to entity
//! expansion.

use super::InputError;
use super::ades::{AdesRecord, record};
use super::sanitize::clean;
use quick_xml::Reader;
use quick_xml::events::Event;

/// Element names this reader takes from an `optical` record (all from the ADES schema).
pub const FIELDS_READ: [&str; 20] = [
    "permID", "provID", "trkSub", "mode", "stn", "obsTime", "ra", "dec", "rmsRA", "rmsDec",
    "rmsCorr", "astCat", "mag", "rmsMag", "band", "sys", "ctr", "pos1", "pos2", "pos3",
];

/// Structural names this reader knows (all from the ADES schema): the root and its version attribute,
/// the blocks, and the record kinds (only `optical` carries a position this program uses).
pub const STRUCTURE: [&str; 9] = [
    "ades",
    "version",
    "obsBlock",
    "obsContext",
    "obsData",
    "optical",
    "offset",
    "occultation",
    "radar",
];

/// Record kinds of the standard that carry no position of the object on the sky.
const NOT_POSITIONS: [&str; 3] = ["offset", "occultation", "radar"];

/// Whether text looks like XML: its first non-blank character opens markup.
pub fn looks_like_xml(text: &str) -> bool {
    text.trim_start().starts_with('<')
}

/// Line numbers from byte offsets, counted forward once.
struct Lines<'a> {
    text: &'a str,
    at: usize,
    line: usize,
}

impl Lines<'_> {
    fn of(&mut self, offset: u64) -> usize {
        let to = (offset as usize).min(self.text.len());
        if to >= self.at {
            self.line += self.text.as_bytes()[self.at..to]
                .iter()
                .filter(|&&b| b == b'\n')
                .count();
            self.at = to;
            self.line
        } else {
            self.text.as_bytes()[..to]
                .iter()
                .filter(|&&b| b == b'\n')
                .count()
                + 1
        }
    }
}

/// The record being read: its kind, line, and fields so far.
struct Open {
    kind: String,
    line: usize,
    fields: Vec<(String, String)>,
    /// The field whose text is being read, and its text so far (only direct children of the record
    /// count).
    field: Option<(String, String)>,
    /// Depth below the record (1 = a field).
    depth: usize,
    /// A field given twice.
    twice: Option<String>,
}

/// Parse an ADES XML document: good records and an error per rejected record (or one for the file).
/// More than `max_records` records stops the read with an error for the file.
pub fn parse(file: &str, text: &str, max_records: usize) -> (Vec<AdesRecord>, Vec<InputError>) {
    let err = |line: usize, column: Option<&str>, reason: String| {
        InputError::cleaned(file, line, column, &reason)
    };
    let text = text.strip_prefix('\u{feff}').unwrap_or(text);
    let mut reader = Reader::from_str(text);
    reader.config_mut().trim_text(true);
    let mut lines = Lines {
        text,
        at: 0,
        line: 1,
    };
    let (mut good, mut bad) = (Vec::new(), Vec::new());
    let mut seen_root = false;
    let mut open: Option<Open> = None;
    let mut records = 0usize;
    loop {
        let event = match reader.read_event() {
            Ok(e) => e,
            Err(e) => {
                let line = lines.of(reader.error_position());
                bad.push(err(line, None, format!("not well-formed XML: {e}")));
                return (good, bad);
            }
        };
        // Just past the event: the line of a tag's closing '>' (a tag is one line in practice).
        let after = reader.buffer_position();
        match event {
            Event::Eof => break,
            Event::DocType(_) => {
                bad.push(err(
                    lines.of(after),
                    None,
                    "document type declarations are not accepted".into(),
                ));
                return (good, bad);
            }
            Event::Start(e) | Event::Empty(e) if !seen_root => {
                let name = local(e.local_name().as_ref());
                if name != "ades" {
                    bad.push(err(
                        lines.of(after),
                        None,
                        format!("XML whose root element is '{name}', not 'ades'"),
                    ));
                    return (good, bad);
                }
                seen_root = true;
            }
            Event::Start(e) => {
                let name = local(e.local_name().as_ref());
                match &mut open {
                    Some(o) => {
                        o.depth += 1;
                        if o.depth == 1 {
                            o.field = Some((name, String::new()));
                        }
                    }
                    None if name == "optical" || NOT_POSITIONS.contains(&name.as_str()) => {
                        records += 1;
                        if records > max_records {
                            bad.push(err(
                                0,
                                None,
                                format!("more than {max_records} records (the observation limit)"),
                            ));
                            return (Vec::new(), bad);
                        }
                        open = Some(Open {
                            kind: name,
                            line: lines.of(after),
                            fields: Vec::new(),
                            field: None,
                            depth: 0,
                            twice: None,
                        });
                    }
                    None => {}
                }
            }
            Event::Empty(e) => {
                if let Some(o) = &mut open
                    && o.depth == 0
                {
                    push_field(o, local(e.local_name().as_ref()), String::new());
                }
            }
            Event::Text(t) => {
                if let Some(o) = &mut open
                    && o.depth == 1
                    && let Some((_, v)) = &mut o.field
                {
                    v.push_str(&t.xml_content().unwrap_or_default());
                }
            }
            Event::CData(t) => {
                if let Some(o) = &mut open
                    && o.depth == 1
                    && let Some((_, v)) = &mut o.field
                {
                    v.push_str(&String::from_utf8_lossy(&t));
                }
            }
            Event::GeneralRef(r) => {
                if let Some(o) = &mut open
                    && o.depth == 1
                    && let Some((f, v)) = &mut o.field
                {
                    match entity(&r) {
                        Some(c) => v.push(c),
                        None => {
                            let name = String::from_utf8_lossy(&r).into_owned();
                            bad.push(err(
                                lines.of(after),
                                Some(f),
                                format!("unknown entity '&{name};'"),
                            ));
                            return (good, bad);
                        }
                    }
                }
            }
            Event::End(_) => {
                let Some(o) = &mut open else { continue };
                if o.depth > 0 {
                    if o.depth == 1
                        && let Some((f, v)) = o.field.take()
                    {
                        push_field(o, f, v);
                    }
                    o.depth -= 1;
                    continue;
                }
                let Some(o) = open.take() else { continue };
                match close(o) {
                    Ok(r) => good.push(r),
                    Err((line, col, reason)) => bad.push(err(line, col.as_deref(), reason)),
                }
            }
            _ => {}
        }
    }
    if !seen_root {
        bad.push(err(0, None, "XML without an 'ades' element".into()));
    } else if good.is_empty() && bad.is_empty() {
        bad.push(err(0, None, "ADES XML without observations".into()));
    }
    (good, bad)
}

/// The record's fields, through the same checks as a PSV line.
fn close(o: Open) -> Result<AdesRecord, (usize, Option<String>, String)> {
    if NOT_POSITIONS.contains(&o.kind.as_str()) {
        return Err((
            o.line,
            None,
            format!("'{}' records are not used (only optical positions)", o.kind),
        ));
    }
    if let Some(f) = o.twice {
        return Err((
            o.line,
            Some(f),
            "element appears twice in the record".into(),
        ));
    }
    let cols: Vec<String> = o.fields.iter().map(|(n, _)| n.clone()).collect();
    let cells: Vec<&str> = o.fields.iter().map(|(_, v)| v.trim()).collect();
    record(o.line, &cols, &cells).map_err(|(c, r)| (o.line, Some(c), r))
}

fn push_field(o: &mut Open, name: String, value: String) {
    if o.fields.iter().any(|(n, _)| *n == name) {
        o.twice.get_or_insert(name);
    } else {
        o.fields.push((name, value));
    }
}

/// The five predefined entities and character references; nothing else.
fn entity(r: &quick_xml::events::BytesRef<'_>) -> Option<char> {
    if r.is_char_ref() {
        return r.resolve_char_ref().ok().flatten();
    }
    match &**r {
        b"amp" => Some('&'),
        b"lt" => Some('<'),
        b"gt" => Some('>'),
        b"quot" => Some('"'),
        b"apos" => Some('\''),
        _ => None,
    }
}

fn local(name: &[u8]) -> String {
    clean(&String::from_utf8_lossy(name))
}

/// Write records as an ADES XML document (for round trips and exports).
pub fn write(records: &[AdesRecord]) -> String {
    use quick_xml::escape::escape;
    let mut s = String::from(
        "<?xml version=\"1.0\" encoding=\"UTF-8\"?>\n<ades version=\"2022\">\n  <obsBlock>\n    <obsData>\n",
    );
    for r in records {
        s.push_str("      <optical>\n");
        let mut put = |name: &str, v: Option<String>| {
            if let Some(v) = v {
                s.push_str(&format!(
                    "        <{name}>{}</{name}>\n",
                    escape(v.as_str())
                ));
            }
        };
        let id_is_trk = r.trk_sub.as_deref() == Some(r.object.as_str());
        put("permID", (!id_is_trk).then(|| r.object.clone()));
        put("trkSub", r.trk_sub.clone());
        put("mode", r.mode.clone());
        put("stn", Some(r.stn.clone()));
        if let Some((sys, ctr, p)) = &r.observer_pos {
            put("sys", Some(sys.clone()));
            put("ctr", Some(ctr.to_string()));
            put("pos1", Some(p[0].to_string()));
            put("pos2", Some(p[1].to_string()));
            put("pos3", Some(p[2].to_string()));
        }
        put("obsTime", Some(r.time_text.clone()));
        put("ra", Some(r.ra_deg.to_string()));
        put("dec", Some(r.dec_deg.to_string()));
        put("rmsRA", r.rms_ra.map(|x| x.to_string()));
        put("rmsDec", r.rms_dec.map(|x| x.to_string()));
        put("rmsCorr", r.rms_corr.map(|x| x.to_string()));
        put("astCat", r.ast_cat.clone());
        put("mag", r.mag.map(|x| x.to_string()));
        put("rmsMag", r.rms_mag.map(|x| x.to_string()));
        put("band", r.band.clone());
        s.push_str("      </optical>\n");
    }
    s.push_str("    </obsData>\n  </obsBlock>\n</ades>\n");
    s
}

#[cfg(test)]
mod tests {
    use super::*;

    const DOC: &str = r#"<?xml version="1.0" encoding="UTF-8"?>
<ades version="2022">
  <obsBlock>
    <obsContext><observatory><mpcCode>TV1</mpcCode></observatory></obsContext>
    <obsData>
      <optical>
        <trkSub>qa7&amp;01</trkSub><mode>CCD</mode><stn>TV1</stn>
        <obsTime>2026-11-30T03:10:11.20Z</obsTime><ra>41.123456</ra><dec>-12.345678</dec>
        <rmsRA>0.15</rmsRA><rmsDec>0.14</rmsDec><astCat>Gaia3</astCat><mag>20.1</mag><band>G</band>
        <localUse><anything>kept out</anything></localUse>
      </optical>
      <optical>
        <trkSub>qa701</trkSub><mode>CCD</mode><stn>TV1</stn>
        <obsTime>2026-02-30T03:10:11.20Z</obsTime><ra>41.1</ra><dec>-12.3</dec><astCat>Gaia3</astCat>
      </optical>
      <radar><permID>1</permID></radar>
    </obsData>
  </obsBlock>
</ades>
"#;

    #[test]
    fn good_records_are_kept_and_bad_ones_named_with_their_line() {
        let (good, bad) = parse("a.xml", DOC, 100);
        assert_eq!(good.len(), 1, "{bad:?}");
        assert_eq!(good[0].object, "qa7&01");
        assert_eq!(good[0].rms_ra, Some(0.15));
        assert_eq!(good[0].line, 6);
        assert_eq!(bad.len(), 2, "{bad:?}");
        assert_eq!(
            bad[0].to_string(),
            "a.xml: line 12, column obsTime: 2026-02-30 is not a date"
        );
        assert!(
            bad[1].reason.contains("'radar' records are not used"),
            "{}",
            bad[1]
        );
        assert_eq!(bad[1].line, 16);
    }

    #[test]
    fn broken_and_hostile_documents_are_refused_with_a_reason() {
        let cases = [
            (
                "<ades version=\"2022\"><optical><stn>TV1</stn></ades>",
                "not well-formed",
            ),
            ("<!DOCTYPE x [<!ENTITY a \"b\">]><ades/>", "document type"),
            ("<root/>", "root element is 'root'"),
            ("<ades version=\"2022\"></ades>", "without observations"),
            (
                "<ades><optical><trkSub>&x;</trkSub></optical></ades>",
                "unknown entity '&x;'",
            ),
            (
                "<ades><optical><stn>TV1</stn><stn>TV2</stn></optical></ades>",
                "appears twice",
            ),
        ];
        for (doc, want) in cases {
            let (good, bad) = parse("b.xml", doc, 100);
            assert!(good.is_empty(), "{doc}");
            assert!(
                bad.iter().any(|e| e.reason.contains(want)),
                "{doc}: {bad:?}"
            );
        }
    }

    #[test]
    fn the_record_limit_stops_the_read() {
        let one = "<optical><trkSub>a</trkSub><stn>TV1</stn><obsTime>2026-01-02T03:04:05Z</obsTime><ra>1</ra><dec>2</dec></optical>";
        let doc = format!("<ades>{}</ades>", one.repeat(11));
        let (good, bad) = parse("c.xml", &doc, 10);
        assert!(good.is_empty());
        assert!(bad[0].reason.contains("more than 10 records"), "{bad:?}");
        assert_eq!(parse("c.xml", &doc, 11).0.len(), 11);
    }

    #[test]
    fn written_documents_read_back_to_the_same_records() {
        let (good, _) = parse("a.xml", DOC, 100);
        let again = write(&good);
        let (back, bad) = parse("d.xml", &again, 100);
        assert!(bad.is_empty(), "{bad:?}");
        assert_eq!(back.len(), 1);
        let strip = |r: &AdesRecord| AdesRecord {
            line: 0,
            ..r.clone()
        };
        assert_eq!(strip(&back[0]), strip(&good[0]));
    }
}
