//! The sidecar of rejected rows that `skip_invalid` writes beside the file.

use std::path::{Path, PathBuf};

use super::escape;
use crate::error::{Error, Result};

/// Rejected rows are written to a temporary file beside the sidecar's name and renamed onto it
/// at the end: a rename replaces whatever stands at the name (a symbolic link planted there
/// included) instead of writing through it.
pub(super) struct Rejected {
    file: PathBuf,
    header: Vec<Vec<u8>>,
    writer: Option<csv::Writer<tempfile::NamedTempFile>>,
}

impl Rejected {
    /// Nothing is made until the first row is rejected.
    pub(super) fn new(file: PathBuf, header: Vec<Vec<u8>>) -> Rejected {
        Rejected {
            file,
            header,
            writer: None,
        }
    }

    /// Add a row as it was read, with the reasons it was refused in a last column.
    pub(super) fn push(&mut self, record: &csv::ByteRecord, reasons: &[String]) -> Result<()> {
        let file = &self.file;
        let io_err = |source| Error::Io {
            path: file.clone(),
            source,
        };
        let csv_err = |e: csv::Error| io_err(std::io::Error::other(e));
        if self.writer.is_none() {
            let dir = match self.file.parent() {
                Some(d) if !d.as_os_str().is_empty() => d,
                _ => Path::new("."),
            };
            let f = tempfile::Builder::new()
                .prefix(".ohmtrail-rejected-")
                .suffix(".tmp")
                .tempfile_in(dir)
                .map_err(io_err)?;
            let mut w = csv::Writer::from_writer(f);
            let mut head = csv::ByteRecord::from(self.header.clone());
            head.push_field(b"reason");
            w.write_byte_record(&head).map_err(csv_err)?;
            self.writer = Some(w);
        }
        if let Some(w) = self.writer.as_mut() {
            // Text is protected against formula injection as export protects it; import
            // removes the mark again.
            let mut out = csv::ByteRecord::new();
            for field in record.iter() {
                match std::str::from_utf8(field) {
                    Ok(t) => out.push_field(escape(t).as_bytes()),
                    Err(_) => out.push_field(field),
                }
            }
            out.push_field(escape(&reasons.join("; ")).as_bytes());
            w.write_byte_record(&out).map_err(csv_err)?;
        }
        Ok(())
    }

    /// Put the sidecar in place, if any row was rejected; its path.
    pub(super) fn persist(self) -> Result<Option<PathBuf>> {
        let Some(w) = self.writer else {
            return Ok(None);
        };
        let io_err = |source| Error::Io {
            path: self.file.clone(),
            source,
        };
        let tmp = w
            .into_inner()
            .map_err(|e| io_err(std::io::Error::other(e.to_string())))?;
        #[cfg(unix)]
        {
            use std::os::unix::fs::PermissionsExt;
            let _ = tmp
                .as_file()
                .set_permissions(std::fs::Permissions::from_mode(0o644));
        }
        tmp.persist(&self.file).map_err(|e| io_err(e.error))?;
        Ok(Some(self.file))
    }
}
