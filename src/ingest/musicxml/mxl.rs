//! Compressed MusicXML (`.mxl`): a zip container whose `META-INF/container.xml` names the root
//! score file (MusicXML 4.0, "Compressed MusicXML files"). Read with the `zip` crate, with
//! limits on the number of entries and on decompressed size.

use super::super::{Limits, Problem};
use std::io::{Cursor, Read};

/// Extracts the root score document from an `.mxl` container: its entry name and bytes.
pub(crate) fn root_document(bytes: &[u8], limits: &Limits) -> Result<(String, Vec<u8>), Problem> {
    let mut archive = zip::ZipArchive::new(Cursor::new(bytes))
        .map_err(|e| Problem::Mxl(format!("not a readable zip container: {e}")))?;
    let entries = archive.len() as u64;
    limits.check_archive_entries(entries)?;
    let root = match read_entry(&mut archive, "META-INF/container.xml", limits)? {
        Some(container) => root_from_container(&container, limits)?,
        None => guess_root(&archive)?,
    };
    match read_entry(&mut archive, &root, limits)? {
        Some(data) => Ok((root, data)),
        None => Err(Problem::Mxl(format!(
            "META-INF/container.xml names '{root}', which is not in the container"
        ))),
    }
}

/// Reads one entry, enforcing the decompressed-size limit on the bytes actually inflated
/// (the size a zip declares is not trusted).
fn read_entry(
    archive: &mut zip::ZipArchive<Cursor<&[u8]>>,
    name: &str,
    limits: &Limits,
) -> Result<Option<Vec<u8>>, Problem> {
    let entry = match archive.by_name(name) {
        Ok(entry) => entry,
        Err(zip::result::ZipError::FileNotFound) => return Ok(None),
        Err(e) => return Err(Problem::Mxl(format!("entry '{name}': {e}"))),
    };
    let limit = limits.max_decompressed_bytes;
    let mut data = Vec::new();
    entry
        .take(limit.saturating_add(1))
        .read_to_end(&mut data)
        .map_err(|e| Problem::Mxl(format!("entry '{name}' cannot be decompressed: {e}")))?;
    limits.check_decompressed_bytes(data.len() as u64)?;
    Ok(Some(data))
}

/// The `full-path` of the first `<rootfile>` in `container.xml`.
fn root_from_container(container: &[u8], limits: &Limits) -> Result<String, Problem> {
    let (text, _) = super::decode::decode(container);
    super::prescan::check(&text, "mxl: META-INF/container.xml", limits)?;
    let doc = roxmltree::Document::parse(&text)
        .map_err(|e| Problem::Mxl(format!("META-INF/container.xml is not well-formed: {e}")))?;
    doc.descendants()
        .filter(|n| n.has_tag_name("rootfile"))
        .filter(|n| {
            n.attribute("media-type")
                .is_none_or(|m| m.contains("musicxml") || m.ends_with("/xml"))
        })
        .find_map(|n| n.attribute("full-path"))
        .map(str::to_string)
        .ok_or_else(|| {
            Problem::Mxl("META-INF/container.xml names no <rootfile full-path=…>".into())
        })
}

/// Without a container file: the only `.musicxml`/`.xml` entry outside META-INF.
fn guess_root(archive: &zip::ZipArchive<Cursor<&[u8]>>) -> Result<String, Problem> {
    let candidates: Vec<&str> = archive
        .file_names()
        .filter(|n| !n.starts_with("META-INF/"))
        .filter(|n| n.ends_with(".musicxml") || n.ends_with(".xml"))
        .collect();
    match candidates.as_slice() {
        [one] => Ok((*one).to_string()),
        [] => Err(Problem::Mxl(
            "no META-INF/container.xml and no .musicxml or .xml entry".into(),
        )),
        many => {
            let mut sorted = many.to_vec();
            sorted.sort_unstable();
            Ok(sorted[0].to_string())
        }
    }
}
