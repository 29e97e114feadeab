//! The typesetter's view of one document: a main source, the data files it reads (the
//! document as JSON, the charts as SVG, the contractor's logo), and fonts compiled into the
//! binary. Nothing is read from the file system or the system's fonts.

use std::collections::HashMap;
use std::sync::LazyLock;

use typst::diag::{FileError, FileResult};
use typst::foundations::{Bytes, Datetime};
use typst::syntax::{FileId, RootedPath, Source, VirtualPath, VirtualRoot};
use typst::text::{Font, FontBook};
use typst::utils::LazyHash;
use typst::{Library, LibraryExt, World};

/// The sans-serif face the documents are set in, with its licence in `assets/fonts/`.
const DEJAVU_SANS: &[u8] = include_bytes!("../../../assets/fonts/DejaVuSans.ttf");
const DEJAVU_SANS_BOLD: &[u8] = include_bytes!("../../../assets/fonts/DejaVuSans-Bold.ttf");

struct Fonts {
    book: LazyHash<FontBook>,
    fonts: Vec<Font>,
}

/// Parsed once per process. DejaVu Sans covers every character the documents print (Ω, Δ,
/// °, ±, the severity shapes ▲ ◆ ● ○), so no fallback face is needed.
static FONTS: LazyLock<Fonts> = LazyLock::new(|| {
    let fonts: Vec<Font> = [DEJAVU_SANS, DEJAVU_SANS_BOLD]
        .into_iter()
        .flat_map(|data| Font::iter(Bytes::new(data)))
        .collect();
    Fonts {
        book: LazyHash::new(FontBook::from_fonts(&fonts)),
        fonts,
    }
});

static LIBRARY: LazyLock<LazyHash<Library>> =
    LazyLock::new(|| LazyHash::new(<Library as LibraryExt>::default()));

/// One document to typeset.
pub struct DocWorld {
    main: Source,
    files: HashMap<FileId, Bytes>,
    today: Datetime,
}

fn file_id(path: &str) -> FileId {
    // The paths are our own constants and generated names: always valid.
    let vpath = VirtualPath::new(path).unwrap_or_else(|_| {
        VirtualPath::new("/invalid").expect("a constant virtual path is valid")
    });
    FileId::new(RootedPath::new(VirtualRoot::Project, vpath))
}

impl DocWorld {
    /// `main` is the template's text; `files` maps absolute virtual paths ("/doc.json") to
    /// their contents.
    pub fn new(main: &str, files: Vec<(String, Vec<u8>)>, today: chrono::NaiveDate) -> Self {
        use chrono::Datelike;
        let main_id = file_id("/main.typ");
        DocWorld {
            main: Source::new(main_id, main.to_string()),
            files: files
                .into_iter()
                .map(|(p, b)| (file_id(&p), Bytes::new(b)))
                .collect(),
            today: Datetime::from_ymd(today.year(), today.month() as u8, today.day() as u8)
                .unwrap_or_else(|| Datetime::from_ymd(2000, 1, 1).expect("a valid date")),
        }
    }
}

impl DocWorld {
    /// A typesetting error with the template line it points at, for a bug report.
    pub fn describe(&self, e: &typst::diag::SourceDiagnostic) -> String {
        use typst::WorldExt as _;
        let line = self
            .range(e.span)
            .and_then(|r| self.main.lines().byte_to_line(r.start))
            .map(|l| format!(" (template line {})", l + 1))
            .unwrap_or_default();
        format!("{}{line}", e.message)
    }
}

impl World for DocWorld {
    fn library(&self) -> &LazyHash<Library> {
        &LIBRARY
    }

    fn book(&self) -> &LazyHash<FontBook> {
        &FONTS.book
    }

    fn main(&self) -> FileId {
        self.main.id()
    }

    fn source(&self, id: FileId) -> FileResult<Source> {
        if id == self.main.id() {
            Ok(self.main.clone())
        } else {
            Err(FileError::NotSource)
        }
    }

    fn file(&self, id: FileId) -> FileResult<Bytes> {
        if id == self.main.id() {
            return Ok(Bytes::from_string(self.main.clone()));
        }
        self.files
            .get(&id)
            .cloned()
            .ok_or_else(|| FileError::NotFound(id.vpath().get_with_slash().into()))
    }

    fn font(&self, index: usize) -> Option<Font> {
        FONTS.fonts.get(index).cloned()
    }

    fn today(&self, _offset: Option<typst::foundations::Duration>) -> Option<Datetime> {
        Some(self.today)
    }
}
