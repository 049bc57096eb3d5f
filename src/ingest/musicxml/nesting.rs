//! How deeply the elements of an XML text nest, measured before the tree is built.
//!
//! The XML parser descends recursively, one call per level, so a document nested thousands of
//! levels deep (or a million unclosed tags) would overflow the stack. MusicXML itself nests
//! about a dozen levels (MusicXML 4.0 schema: `score-partwise/part/measure/note/notations/
//! technical/…`), so a document deeper than [`MAX_DEPTH`] is refused before parsing.
//!
//! The scan is a light tokenizer: comments, CDATA sections, processing instructions and quoted
//! attribute values are skipped; start tags open a level unless they end in `/>`; end tags
//! close one. Internal entities may hold markup too, and the parser expands them up to
//! [`ENTITY_LEVELS`] deep, so the deepest entity value counts that many times over.

/// Most levels of elements nested in one document.
pub(crate) const MAX_DEPTH: usize = 256;

/// Levels of entity references within entity references that `roxmltree` expands (its
/// documented limit: "entities depth is 10").
const ENTITY_LEVELS: usize = 10;

/// The deepest nesting of elements in `text`, counting entity values as the parser expands
/// them; stops counting once `limit` is exceeded.
pub(crate) fn depth(text: &str, limit: usize) -> usize {
    let (main, entities) = scan(text.as_bytes(), limit);
    main.saturating_add(entities.saturating_mul(ENTITY_LEVELS))
}

/// Whether the document nests deeper than [`MAX_DEPTH`]: the depth found when it does.
pub(crate) fn too_deep(text: &str) -> Option<usize> {
    let found = depth(text, MAX_DEPTH);
    (found > MAX_DEPTH).then_some(found)
}

/// (deepest nesting of the content, deepest nesting inside any quoted value of a DOCTYPE).
fn scan(b: &[u8], limit: usize) -> (usize, usize) {
    let mut depth = 0usize;
    let mut deepest = 0usize;
    let mut entities = 0usize;
    let mut i = 0;
    while i < b.len() {
        if b[i] != b'<' {
            i += 1;
            continue;
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
            entities = entities.max(inner);
            i = end;
        } else if rest.starts_with(b"</") {
            depth = depth.saturating_sub(1);
            i = skip_past(b, i + 2, b">");
        } else {
            let (end, closed) = start_tag(b, i + 1);
            if !closed {
                depth += 1;
                deepest = deepest.max(depth);
                if deepest > limit {
                    break;
                }
            }
            i = end;
        }
    }
    (deepest, entities)
}

/// The index just past the first `pattern` at or after `from` (the end when there is none).
fn skip_past(b: &[u8], from: usize, pattern: &[u8]) -> usize {
    b.get(from..)
        .and_then(|rest| rest.windows(pattern.len()).position(|w| w == pattern))
        .map_or(b.len(), |p| from + p + pattern.len())
}

/// Skips a start tag from just after `<`: (index past `>`, whether it ends in `/>`).
fn start_tag(b: &[u8], mut i: usize) -> (usize, bool) {
    let mut quote = None;
    while i < b.len() {
        let c = b[i];
        match quote {
            Some(q) if c == q => quote = None,
            Some(_) => {}
            None if c == b'"' || c == b'\'' => quote = Some(c),
            None if c == b'>' => return (i + 1, i > 0 && b[i - 1] == b'/'),
            None => {}
        }
        i += 1;
    }
    (b.len(), false)
}

/// Skips a `<!…>` declaration (a DOCTYPE with its internal subset) from just after `<!`:
/// (index past it, deepest nesting of markup in any quoted value inside it).
fn doctype(b: &[u8], mut i: usize, limit: usize) -> (usize, usize) {
    let mut deepest = 0;
    let mut brackets = 0usize;
    while i < b.len() {
        match b[i] {
            b'"' | b'\'' => {
                let q = b[i];
                let end = b[i + 1..]
                    .iter()
                    .position(|&c| c == q)
                    .map_or(b.len(), |p| i + 1 + p);
                deepest = deepest.max(scan(&b[i + 1..end], limit).0);
                i = end + 1;
                continue;
            }
            b'<' if b[i..].starts_with(b"<!--") => {
                i = skip_past(b, i + 4, b"-->");
                continue;
            }
            b'[' => brackets += 1,
            b']' => brackets = brackets.saturating_sub(1),
            b'>' if brackets == 0 => return (i + 1, deepest),
            _ => {}
        }
        i += 1;
    }
    (b.len(), deepest)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn counts_levels_and_skips_what_is_not_a_tag() {
        assert_eq!(depth("<a><b/><c><d></d></c></a>", 100), 3);
        assert_eq!(
            depth(
                "<a x='<b>' y=\"/>\"><!-- <c><c> --><![CDATA[<e><e>]]><?pi <f>?></a>",
                100
            ),
            1
        );
    }

    #[test]
    fn entity_values_count_as_expanded() {
        let doc = "<!DOCTYPE a [<!ENTITY e \"<b><c/></b>\"><!-- it's -->]><a>&e;</a>";
        assert_eq!(depth(doc, 100), 1 + ENTITY_LEVELS);
    }

    #[test]
    fn deep_and_unclosed_documents_are_found() {
        let deep = format!("{}{}", "<a>".repeat(20_000), "</a>".repeat(20_000));
        assert!(too_deep(&deep).is_some());
        assert!(too_deep(&"<a>".repeat(1_000_000)).is_some());
        let fine = format!("{}{}", "<a>".repeat(MAX_DEPTH), "</a>".repeat(MAX_DEPTH));
        assert_eq!(too_deep(&fine), None);
    }
}
