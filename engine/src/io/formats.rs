//! The input formats of an import and the import of a netlist file by its format: the
//! readers ([`super::connections`], [`super::edif`]) build on [`super::import`]'s shared
//! netlist types; this module picks one.

use std::path::Path;

use super::Location;
use super::import::{ImportError, ImportOptions, Imported, Reason};
use super::{connections, edif};

/// The input formats [`import_file`] tells apart.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Format {
    /// CSV/TSV connection list ([`super::connections`]).
    Connections,
    /// EDIF 2 0 0 netlist ([`super::edif`]).
    Edif,
}

impl Format {
    /// By the file's extension (`.csv`, `.tsv`, `.txt`; `.edif`, `.edf`, `.edn`), else by
    /// its content: EDIF starts with `(`, after blanks.
    pub fn detect(path: &Path, bytes: &[u8]) -> Format {
        let ext = path
            .extension()
            .and_then(|e| e.to_str())
            .map(str::to_lowercase);
        match ext.as_deref() {
            Some("csv" | "tsv" | "txt") => Format::Connections,
            Some("edif" | "edf" | "edn") => Format::Edif,
            _ => {
                let bytes = bytes.strip_prefix(b"\xEF\xBB\xBF").unwrap_or(bytes);
                if bytes.iter().find(|b| !b.is_ascii_whitespace()) == Some(&b'(') {
                    Format::Edif
                } else {
                    Format::Connections
                }
            }
        }
    }
}

/// Where the inputs of an import are.
#[derive(Clone, Debug)]
pub struct ImportFiles<'a> {
    /// The netlist: a connection list or an EDIF file.
    pub netlist: &'a Path,
    /// A parts table (connection lists only).
    pub parts: Option<&'a Path>,
    /// A footprint mapping file (EDIF only).
    pub footprints: Option<&'a Path>,
}

fn read(path: &Path) -> Result<Vec<u8>, ImportError> {
    std::fs::read(path).map_err(|cause| ImportError::Io {
        path: path.to_path_buf(),
        cause,
    })
}

/// Reads the files, picks the format ([`Format::detect`]) and imports. A parts table
/// given with EDIF, or a mapping file with a connection list, is refused.
pub fn import_file(
    files: &ImportFiles<'_>,
    opts: &ImportOptions,
) -> Result<(Format, Imported), ImportError> {
    let bytes = read(files.netlist)?;
    let file = files.netlist.display().to_string();
    let format = Format::detect(files.netlist, &bytes);
    let origin = Location { line: 1, column: 1 };
    let imported = match format {
        Format::Connections => {
            if files.footprints.is_some() {
                return Err(ImportError::one(
                    &file,
                    origin,
                    Reason::Syntax(
                        "a footprint mapping file applies to EDIF netlists; give connection lists a parts table".into(),
                    ),
                ));
            }
            let parts = match files.parts {
                Some(p) => Some((p.display().to_string(), read(p)?)),
                None => None,
            };
            connections::import_connections(
                &bytes,
                &file,
                parts.as_ref().map(|(n, b)| (n.as_str(), b.as_slice())),
                opts,
            )?
        }
        Format::Edif => {
            if files.parts.is_some() {
                return Err(ImportError::one(
                    &file,
                    origin,
                    Reason::Syntax(
                        "a parts table applies to connection lists; give EDIF netlists a footprint mapping file".into(),
                    ),
                ));
            }
            let map = match files.footprints {
                Some(p) => Some((p.display().to_string(), read(p)?)),
                None => None,
            };
            edif::import_edif(
                &bytes,
                &file,
                map.as_ref().map(|(n, b)| (n.as_str(), b.as_slice())),
                opts,
            )?
        }
    };
    Ok((format, imported))
}
