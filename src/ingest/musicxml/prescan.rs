//! The shape of an XML text measured before the tree is built: how deeply elements nest, the
//! most attributes on one element, and how large the entity references would expand.
//!
//! The XML parser descends recursively, one call per level, so a document nested thousands of
//! levels deep (or a million unclosed tags) would overflow the stack; it checks the attributes
//! of an element for duplicates pair by pair, so 200,000 attributes take minutes; and a short
//! entity used thousands of times expands to megabytes of text. MusicXML itself nests about a
//! dozen levels (MusicXML 4.0 schema: `score-partwise/part/measure/note/notations/
//! technical/…`), has elements with a handful of attributes and rarely declares entities, so
//! documents beyond [`MAX_DEPTH`], [`MAX_ATTRIBUTES`] or [`MAX_EXPANSION`] are refused before
//! parsing.
//!
//! The scan is a light tokenizer: comments, CDATA sections, processing instructions and quoted
//! attribute values are skipped; start tags open a level unless they end in `/>`; end tags
//! close one. Internal entities may hold markup too, and the parser expands them up to
//! [`ENTITY_LEVELS`] deep, so the deepest entity value counts that many times over.

use super::super::{Limits, Problem};

/// Most levels of elements nested in one document.
pub(crate) const MAX_DEPTH: usize = 256;
/// Most attributes on one element.
pub(crate) const MAX_ATTRIBUTES: usize = 1_000;
/// Most bytes that references to declared entities may add to a document, as a multiple of
/// the document's own length (at least 1 MiB).
pub(crate) const MAX_EXPANSION: usize = 16;

/// Levels of entity references within entity references that `roxmltree` expands (its
/// documented limit: "entities depth is 10").
const ENTITY_LEVELS: usize = 10;

/// What the scan measured.
#[derive(Debug, Default, Clone, Copy, PartialEq, Eq)]
pub(crate) struct Shape {
    /// Deepest nesting of the content (counting stops past the limit).
    pub depth: usize,
    /// Deepest nesting of markup inside any quoted value of a DOCTYPE (entity values).
    pub entity_depth: usize,
    /// Most attributes on one start tag.
    pub attributes: usize,
    /// References to entities other than the five predefined ones and character references.
    pub entity_references: usize,
    /// Longest quoted value in a DOCTYPE, in bytes.
    pub longest_entity: usize,
    /// Elements (start tags) in the content.
    pub elements: u64,
    /// `<note>` elements in the content.
    pub notes: u64,
}

impl Shape {
    /// Nesting as the parser meets it, entity values expanded.
    pub fn expanded_depth(&self) -> usize {
        self.depth
            .saturating_add(self.entity_depth.saturating_mul(ENTITY_LEVELS))
    }
}

/// Elements allowed per note of `--max-notes` (a MusicXML note with pitch, duration, voice,
/// type, stem, beams and notations takes 10 to 20), and at least a million.
const ELEMENTS_PER_NOTE: u64 = 40;

/// Checks `text` against the limits (and the note limit against its `<note>` elements, before
/// a tree of them is built); `layer` starts the message (`musicxml`, `mxl: …`).
pub(crate) fn check(text: &str, layer: &'static str, limits: &Limits) -> Result<(), Problem> {
    let shape = scan(text.as_bytes(), MAX_DEPTH);
    if shape.expanded_depth() > MAX_DEPTH {
        return Err(Problem::TooDeep {
            layer,
            limit: MAX_DEPTH,
        });
    }
    let refuse = |what: String| Err(Problem::XmlLimit { layer, what });
    if shape.attributes > MAX_ATTRIBUTES {
        return refuse(format!(
            "an element with more than {MAX_ATTRIBUTES} attributes"
        ));
    }
    limits.check_notes(shape.notes)?;
    Limits::check(
        shape.elements,
        limits
            .max_notes
            .saturating_mul(ELEMENTS_PER_NOTE)
            .max(1_000_000),
        "number of XML elements",
        "--max-notes",
    )?;
    let expansion = shape.entity_references.saturating_mul(shape.longest_entity);
    let allowed = text.len().saturating_mul(MAX_EXPANSION).max(1 << 20);
    if expansion > allowed {
        return refuse(format!(
            "entity references could expand to {expansion} bytes, more than {MAX_EXPANSION} times the document"
        ));
    }
    Ok(())
}

/// Measures the shape of `b`; stops counting depth once `limit` is exceeded.
fn scan(b: &[u8], limit: usize) -> Shape {
    let mut shape = Shape::default();
    let mut depth = 0usize;
    let mut i = 0;
    while i < b.len() {
        match b[i] {
            b'&' => {
                shape.entity_references += usize::from(declared_entity(&b[i + 1..]));
                i += 1;
                continue;
            }
            b'<' => {}
            _ => {
                i += 1;
                continue;
            }
        }
        let rest = &b[i..];
        if rest.starts_with(b"<!--") {
            i = skip_past(b, i + 4, b"-->");
        } else if rest.starts_with(b"<![CDATA[") {
            i = skip_past(b, i + 9, b"]]>");
        } else if rest.starts_with(b"<?") {
            i = skip_past(b, i + 2, b"?>");
        } else if rest.starts_with(b"<!") {
            let (end, inner) = doctype(b, i + 2, limit);
            shape.entity_depth = shape.entity_depth.max(inner.depth);
            shape.longest_entity = shape.longest_entity.max(inner.longest_entity);
            shape.attributes = shape.attributes.max(inner.attributes);
            i = end;
        } else if rest.starts_with(b"</") {
            depth = depth.saturating_sub(1);
            i = skip_past(b, i + 2, b">");
        } else {
            let tag = start_tag(b, i + 1);
            shape.elements += 1;
            shape.notes += u64::from(is_note(&b[i + 1..]));
            shape.attributes = shape.attributes.max(tag.attributes);
            shape.entity_references += tag.references;
            if !tag.closed {
                depth += 1;
                shape.depth = shape.depth.max(depth);
                if shape.depth > limit {
                    break;
                }
            }
            i = tag.end;
        }
    }
    shape
}

/// Whether a start tag (from just after `<`) is a `<note>`.
fn is_note(tag: &[u8]) -> bool {
    tag.starts_with(b"note")
        && tag
            .get(4)
            .is_some_and(|c| c.is_ascii_whitespace() || *c == b'>' || *c == b'/')
}

/// Whether the text after `&` is a reference to a declared entity: not a character reference
/// and not one of the five entities XML predefines.
fn declared_entity(after: &[u8]) -> bool {
    const PREDEFINED: [&[u8]; 5] = [b"amp;", b"lt;", b"gt;", b"quot;", b"apos;"];
    !after.starts_with(b"#") && !PREDEFINED.iter().any(|p| after.starts_with(p))
}

/// The index just past the first `pattern` at or after `from` (the end when there is none).
fn skip_past(b: &[u8], from: usize, pattern: &[u8]) -> usize {
    b.get(from..)
        .and_then(|rest| rest.windows(pattern.len()).position(|w| w == pattern))
        .map_or(b.len(), |p| from + p + pattern.len())
}

/// A start tag as the scan sees it.
struct Tag {
    /// Index past its `>`.
    end: usize,
    /// Ends in `/>`.
    closed: bool,
    /// Attributes (each `=` outside quotes).
    attributes: usize,
    /// References to declared entities in attribute values.
    references: usize,
}

/// Skips a start tag from just after `<`.
fn start_tag(b: &[u8], mut i: usize) -> Tag {
    let mut quote = None;
    let mut attributes = 0;
    let mut references = 0;
    while i < b.len() {
        let c = b[i];
        match quote {
            Some(q) if c == q => quote = None,
            Some(_) if c == b'&' => references += usize::from(declared_entity(&b[i + 1..])),
            Some(_) => {}
            None if c == b'"' || c == b'\'' => quote = Some(c),
            None if c == b'=' => attributes += 1,
            None if c == b'>' => {
                return Tag {
                    end: i + 1,
                    closed: i > 0 && b[i - 1] == b'/',
                    attributes,
                    references,
                }
            }
            None => {}
        }
        i += 1;
    }
    Tag {
        end: b.len(),
        closed: false,
        attributes,
        references,
    }
}

/// Skips a `<!…>` declaration (a DOCTYPE with its internal subset) from just after `<!`:
/// (index past it, the shape of the quoted values inside it: deepest markup as `depth`,
/// longest value as `longest_entity`).
fn doctype(b: &[u8], mut i: usize, limit: usize) -> (usize, Shape) {
    let mut inner = Shape::default();
    let mut brackets = 0usize;
    while i < b.len() {
        match b[i] {
            b'"' | b'\'' => {
                let q = b[i];
                let end = b[i + 1..]
                    .iter()
                    .position(|&c| c == q)
                    .map_or(b.len(), |p| i + 1 + p);
                let value = scan(&b[i + 1..end], limit);
                inner.depth = inner.depth.max(value.depth);
                inner.attributes = inner.attributes.max(value.attributes);
                inner.longest_entity = inner.longest_entity.max(end - i - 1);
                i = end + 1;
                continue;
            }
            b'<' if b[i..].starts_with(b"<!--") => {
                i = skip_past(b, i + 4, b"-->");
                continue;
            }
            b'[' => brackets += 1,
            b']' => brackets = brackets.saturating_sub(1),
            b'>' if brackets == 0 => return (i + 1, inner),
            _ => {}
        }
        i += 1;
    }
    (b.len(), inner)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn depth(text: &str) -> usize {
        scan(text.as_bytes(), 100).expanded_depth()
    }

    #[test]
    fn counts_levels_and_skips_what_is_not_a_tag() {
        assert_eq!(depth("<a><b/><c><d></d></c></a>"), 3);
        assert_eq!(
            depth("<a x='<b>' y=\"/>\"><!-- <c><c> --><![CDATA[<e><e>]]><?pi <f>?></a>"),
            1
        );
    }

    #[test]
    fn entity_values_count_as_expanded() {
        let doc = "<!DOCTYPE a [<!ENTITY e \"<b><c/></b>\"><!-- it's -->]><a>&e;</a>";
        assert_eq!(depth(doc), 1 + ENTITY_LEVELS);
    }

    #[test]
    fn deep_and_unclosed_documents_are_found() {
        let too_deep = |t: &str| {
            matches!(
                check(t, "musicxml", &Limits::default()),
                Err(Problem::TooDeep { .. })
            )
        };
        let deep = format!("{}{}", "<a>".repeat(20_000), "</a>".repeat(20_000));
        assert!(too_deep(&deep));
        assert!(too_deep(&"<a>".repeat(1_000_000)));
        let fine = format!("{}{}", "<a>".repeat(MAX_DEPTH), "</a>".repeat(MAX_DEPTH));
        assert!(check(&fine, "musicxml", &Limits::default()).is_ok());
    }

    #[test]
    fn notes_and_elements_are_counted_before_parsing() {
        let limits = Limits {
            max_notes: 2,
            ..Limits::default()
        };
        let notes = "<a><note/><note x='1'><notehead/></note><notes/></a>";
        assert_eq!(scan(notes.as_bytes(), 100).notes, 2);
        assert_eq!(scan(notes.as_bytes(), 100).elements, 5);
        assert!(check(notes, "musicxml", &limits).is_ok());
        let three = "<a><note/><note/><note/></a>";
        assert!(matches!(
            check(three, "musicxml", &limits),
            Err(Problem::Limit { .. })
        ));
    }

    #[test]
    fn many_attributes_and_large_expansions_are_found() {
        let attrs: String = (0..2_000).map(|k| format!(" a{k}='1'")).collect();
        assert!(check(&format!("<a{attrs}/>"), "musicxml", &Limits::default()).is_err());
        let value = "x".repeat(5_000);
        let doc = format!(
            "<!DOCTYPE a [<!ENTITY e \"{value}\">]><a>{}</a>",
            "&e;".repeat(5_000)
        );
        assert!(check(&doc, "musicxml", &Limits::default()).is_err());
        let in_attributes = format!(
            "<!DOCTYPE a [<!ENTITY e \"{value}\">]><a>{}</a>",
            "<b c='&e;'/>".repeat(5_000)
        );
        assert!(check(&in_attributes, "musicxml", &Limits::default()).is_err());
        let few = format!("<!DOCTYPE a [<!ENTITY e \"{value}\">]><a>&e;&e;&amp;&#65;</a>");
        assert!(check(&few, "musicxml", &Limits::default()).is_ok());
    }
}
