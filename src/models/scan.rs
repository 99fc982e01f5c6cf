//! The scan: a library's files read through `.include` and `.lib` sections as ngspice reads
//! them, within the limits of nesting and bytes, its models, subcircuits and options collected.

use std::collections::HashMap;
use std::path::{Component, Path, PathBuf};
use std::rc::Rc;

use crate::diagnostic::Span;
use crate::models::cards::{Card, Kind, LibCard, include_path, kind, lib_card, model, split_cards, tokens};
use crate::models::error::{Problem, ScanError};
use crate::models::library::Library;
use crate::models::types::{FileId, Location, MAX_LIBRARY_BYTES, MAX_NESTING, MAX_PROBLEMS, Reader, SourceFile};

/// Scan the library `entry` (path and text) as ngspice reads it: the whole file, as by
/// `.include ENTRY`, or with a section, as by `.lib ENTRY SECTION`. `read` fetches every other
/// file by its path (relative names joined to the including file's directory).
pub fn scan(entry: &Path, text: &str, section: Option<&str>, read: &mut Reader<'_>) -> Library {
    let mut scanner = Scanner {
        read,
        files: Vec::new(),
        by_path: HashMap::new(),
        loaded: HashMap::new(),
        bytes: 0,
        stopped: false,
        errors: Vec::new(),
        warnings: Vec::new(),
        include_stack: Vec::new(),
        section_stack: Vec::new(),
    };
    let id = scanner.add_file(entry.to_path_buf(), text.to_string());
    let mut deck = Vec::new();
    if let Some(loaded) = scanner.load(id, 0, None) {
        match section {
            Some(name) => {
                if let Err(problem) = scanner.expand_section(id, &loaded.cards, name, 0, &mut deck) {
                    scanner.error(problem.error, problem.at);
                }
            }
            None => scanner.expand_references(&loaded.cards, None, 0, &mut deck),
        }
    }
    let mut library = Library {
        files: Vec::new(),
        section: section.map(str::to_string),
        models: Vec::new(),
        subcircuits: Vec::new(),
        scale: None,
        errors: Vec::new(),
        warnings: Vec::new(),
    };
    scanner.emit(&deck, section.is_some(), &mut library);
    library.files = scanner.files;
    library.errors = scanner.errors;
    library.warnings = scanner.warnings;
    library
}

/// A file's cards with its includes in place, and what that took.
#[derive(Clone)]
struct Loaded {
    cards: Rc<Vec<Card>>,
    /// Deepest include nesting below the file.
    height: usize,
    /// Bytes of the file and everything it includes, each inclusion counted.
    bytes: usize,
}

struct Scanner<'r, 'a> {
    read: &'r mut Reader<'a>,
    files: Vec<SourceFile>,
    by_path: HashMap<PathBuf, FileId>,
    loaded: HashMap<FileId, Loaded>,
    bytes: usize,
    stopped: bool,
    errors: Vec<Problem>,
    warnings: Vec<Problem>,
    include_stack: Vec<FileId>,
    section_stack: Vec<(FileId, String)>,
}

/// `path` with `.` dropped and `..` taken against the component before it, without the file system.
pub(crate) fn normalize(path: &Path) -> PathBuf {
    let mut out = PathBuf::new();
    for component in path.components() {
        match component {
            Component::CurDir => {}
            Component::ParentDir => {
                if matches!(out.components().next_back(), Some(Component::Normal(_))) {
                    out.pop();
                } else {
                    out.push("..");
                }
            }
            other => out.push(other.as_os_str()),
        }
    }
    out
}

impl Scanner<'_, '_> {
    fn error(&mut self, error: ScanError, at: Option<Location>) {
        if self.errors.len() < MAX_PROBLEMS {
            self.errors.push(Problem { error, at });
        }
    }

    fn warning(&mut self, error: ScanError, at: Option<Location>) {
        if self.warnings.len() < MAX_PROBLEMS {
            self.warnings.push(Problem { error, at });
        }
    }

    fn add_file(&mut self, path: PathBuf, text: String) -> FileId {
        let id = FileId(self.files.len());
        self.by_path.insert(normalize(&path), id);
        self.files.push(SourceFile { path, text });
        id
    }

    /// Count `bytes` against the budget; false (and one error) once it is spent.
    fn spend(&mut self, bytes: usize, at: Option<Location>) -> bool {
        if self.stopped {
            return false;
        }
        self.bytes = self.bytes.saturating_add(bytes);
        if self.bytes > MAX_LIBRARY_BYTES {
            self.stopped = true;
            self.error(ScanError::TooLarge { limit: MAX_LIBRARY_BYTES }, at);
            return false;
        }
        true
    }

    /// The file at `path` (read once, then remembered), or an error at `at`.
    fn open(&mut self, path: PathBuf, at: Location) -> Option<FileId> {
        if let Some(&id) = self.by_path.get(&normalize(&path)) {
            return Some(id);
        }
        match (self.read)(&path) {
            Ok(text) => Some(self.add_file(path, text)),
            Err(error) => {
                self.error(ScanError::Unreadable { path, message: error.to_string() }, Some(at));
                None
            }
        }
    }

    /// Resolve a file name written in `from`: absolute as is, relative to `base` (a directory);
    /// `None` for `base` means the deck's directory, which the scan does not know.
    fn resolve(&mut self, written: &str, base: Option<&Path>, at: Location) -> Option<PathBuf> {
        if written.starts_with('~') {
            self.error(ScanError::HomePath { path: written.to_string() }, Some(at));
            return None;
        }
        let path = Path::new(written);
        if path.is_absolute() {
            return Some(path.to_path_buf());
        }
        match base {
            Some(base) => Some(base.join(path)),
            None => {
                self.error(ScanError::FromDeckDirectory { path: written.to_string() }, Some(at));
                None
            }
        }
    }

    fn directory_of(&self, id: FileId) -> PathBuf {
        self.files[id.0].path.parent().map(Path::to_path_buf).unwrap_or_default()
    }

    /// The cards of file `id` with its `.include`s in place, at nesting `depth`; `None` once the
    /// budget is spent or the nesting too deep. An include that fails is an error and is left out,
    /// and the scan goes on to find further problems (ngspice would stop at the first).
    fn load(&mut self, id: FileId, depth: usize, at: Option<Location>) -> Option<Loaded> {
        if let Some(loaded) = self.loaded.get(&id).cloned() {
            if depth + loaded.height > MAX_NESTING {
                self.error(ScanError::TooDeep { limit: MAX_NESTING }, at);
                return None;
            }
            return self.spend(loaded.bytes, at).then_some(loaded);
        }
        if !self.spend(self.files[id.0].text.len(), at) {
            return None;
        }
        let (cards, problems) = split_cards(id, &self.files[id.0].text);
        for problem in problems {
            self.warning(problem.error, problem.at);
        }
        self.include_stack.push(id);
        let mut out = Vec::with_capacity(cards.len());
        let mut height = 0;
        let mut bytes = self.files[id.0].text.len();
        for card in cards {
            let first = card.first(&self.files);
            if kind(first) != Kind::Include {
                out.push(card);
                continue;
            }
            let (offset, written) = match include_path(first) {
                Ok((offset, written)) => (offset, written.to_string()),
                Err(error) => {
                    self.error(error, Some(card.first_location()));
                    continue;
                }
            };
            let start = card.pieces[0].start + offset;
            let at_path = Location { file: id, span: Span::new(start, start + written.len()) };
            let directory = self.directory_of(id);
            let Some(path) = self.resolve(&written, Some(&directory), at_path) else { continue };
            if depth + 1 > MAX_NESTING {
                self.error(ScanError::TooDeep { limit: MAX_NESTING }, Some(at_path));
                continue;
            }
            let Some(child) = self.open(path, at_path) else { continue };
            if self.include_stack.contains(&child) {
                let path = self.files[child.0].path.clone();
                self.error(ScanError::IncludeCycle { path }, Some(at_path));
                continue;
            }
            if let Some(loaded) = self.load(child, depth + 1, Some(at_path)) {
                height = height.max(loaded.height + 1);
                bytes = bytes.saturating_add(loaded.bytes);
                out.extend(loaded.cards.iter().cloned());
            }
        }
        self.include_stack.pop();
        let loaded = Loaded { cards: Rc::new(out), height, bytes };
        self.loaded.insert(id, loaded.clone());
        Some(loaded)
    }

    /// Copy `cards` to `deck`, replacing each `.lib FILE SECTION` by that section's cards; relative
    /// files resolve against `base` (`None`: the deck's directory).
    fn expand_references(&mut self, cards: &[Card], base: Option<&Path>, depth: usize, deck: &mut Vec<Card>) {
        for card in cards {
            if self.stopped {
                return;
            }
            let first = card.first(&self.files);
            if kind(first) != Kind::Lib {
                deck.push(card.clone());
                continue;
            }
            let Some((offset, LibCard::Reference { path, section })) = lib_card(first) else {
                deck.push(card.clone());
                continue;
            };
            let (path, section) = (path.to_string(), section.to_string());
            let start = card.pieces[0].start + offset;
            let at = Location { file: card.file, span: Span::new(start, start + path.len()) };
            if let Err(problem) = self.reference(&path, &section, base, at, depth, deck) {
                self.error(problem.error, problem.at);
            }
        }
    }

    /// Expand `.lib PATH SECTION` written at `at`.
    fn reference(
        &mut self,
        written: &str,
        section: &str,
        base: Option<&Path>,
        at: Location,
        depth: usize,
        deck: &mut Vec<Card>,
    ) -> Result<(), Problem> {
        let Some(path) = self.resolve(written, base, at) else { return Ok(()) };
        if depth + 1 > MAX_NESTING {
            return Err(Problem { error: ScanError::TooDeep { limit: MAX_NESTING }, at: Some(at) });
        }
        let Some(id) = self.open(path, at) else { return Ok(()) };
        let Some(loaded) = self.load(id, depth + 1, Some(at)) else { return Ok(()) };
        self.expand_section(id, &loaded.cards, section, depth + 1, deck).map_err(|mut problem| {
            problem.at = problem.at.or(Some(at));
            problem
        })
    }

    /// The cards of section `name` of file `id` (whose cards are `cards`), references expanded.
    fn expand_section(
        &mut self,
        id: FileId,
        cards: &[Card],
        name: &str,
        depth: usize,
        deck: &mut Vec<Card>,
    ) -> Result<(), Problem> {
        let path = self.files[id.0].path.clone();
        let mut known = Vec::new();
        let mut found = None;
        for (index, card) in cards.iter().enumerate() {
            let first = card.first(&self.files);
            if kind(first) != Kind::Lib {
                continue;
            }
            if let Some((_, LibCard::Definition { name: defined })) = lib_card(first) {
                if found.is_none() && defined.eq_ignore_ascii_case(name) {
                    found = Some(index);
                }
                if !known.iter().any(|k: &String| k.eq_ignore_ascii_case(defined)) {
                    known.push(defined.to_string());
                }
            }
        }
        let Some(start) = found else {
            return Err(Problem {
                error: ScanError::UnknownSection { section: name.to_string(), path, known },
                at: None,
            });
        };
        let definition = cards[start].first_location();
        let Some(length) = cards[start + 1..].iter().position(|card| kind(card.first(&self.files)) == Kind::EndLib)
        else {
            return Err(Problem {
                error: ScanError::UnclosedSection { section: name.to_string() },
                at: Some(definition),
            });
        };
        let key = (id, name.to_ascii_lowercase());
        if self.section_stack.contains(&key) {
            return Err(Problem { error: ScanError::SectionCycle { section: name.to_string(), path }, at: None });
        }
        let section_cards = &cards[start + 1..start + 1 + length];
        let bytes = section_cards.iter().map(|card| card.location().span.end - card.location().span.start).sum();
        if !self.spend(bytes, Some(definition)) {
            return Ok(());
        }
        self.section_stack.push(key);
        let base = self.directory_of(id);
        self.expand_references(section_cards, Some(&base), depth, deck);
        self.section_stack.pop();
        Ok(())
    }

    /// Read the deck's cards: models, subcircuits, the `scale` option, and cards ngspice rejects.
    fn emit(&mut self, deck: &[Card], sectioned: bool, library: &mut Library) {
        let mut subcircuits: Vec<String> = Vec::new();
        let mut sections: Vec<(String, Location)> = Vec::new();
        for card in deck {
            let first = card.first(&self.files);
            match kind(first) {
                Kind::Model => match model(card, &self.files) {
                    Ok(mut model) => {
                        model.subcircuit = subcircuits.last().cloned();
                        library.models.push(model);
                    }
                    Err(error) => self.error(error, Some(card.first_location())),
                },
                Kind::Subcircuit => {
                    let tokens = tokens(card, &self.files);
                    let name = tokens.get(1).map_or(String::new(), |t| t.text.to_ascii_lowercase());
                    if subcircuits.is_empty()
                        && let Some(token) = tokens.get(1)
                    {
                        library.subcircuits.push((name.clone(), Location { file: card.file, span: token.span }));
                    }
                    subcircuits.push(name);
                }
                Kind::EndSubcircuit => {
                    subcircuits.pop();
                }
                Kind::Options => {
                    let scale = tokens(card, &self.files).into_iter().find(|t| t.text.eq_ignore_ascii_case("scale"));
                    if let (Some(token), None) = (scale, library.scale) {
                        library.scale = Some(Location { file: card.file, span: token.span });
                    }
                }
                Kind::Lib => match lib_card(first) {
                    Some((_, LibCard::Definition { name })) => sections.push((name.to_string(), card.first_location())),
                    Some((_, LibCard::Reference { .. })) => {}
                    None => self.error(ScanError::MissingSectionName, Some(card.first_location())),
                },
                Kind::EndLib => {
                    if !sectioned && sections.is_empty() {
                        self.error(ScanError::StrayEndl, Some(card.first_location()));
                    }
                }
                Kind::Include | Kind::Other => {}
            }
        }
        if let Some((_, at)) = sections.first() {
            if sectioned {
                for (name, at) in &sections {
                    self.error(ScanError::NestedSection { section: name.clone() }, Some(*at));
                }
            } else {
                let names = sections.iter().map(|(name, _)| name.clone()).collect();
                self.error(ScanError::SectionsNeedName { sections: names }, Some(*at));
            }
        }
        let mut first_of: HashMap<&str, Location> = HashMap::new();
        for model in library.models.iter().filter(|model| model.subcircuit.is_none()) {
            match first_of.get(model.name.as_str()) {
                Some(&first) => {
                    let file = &self.files[first.file.0];
                    let line = crate::diagnostic::line_and_column(&file.text, first.span.start).0;
                    let first = format!("{}:{line}", file.path.display());
                    self.warning(ScanError::DuplicateModel { name: model.name.clone(), first }, Some(model.at));
                }
                None => {
                    first_of.insert(&model.name, model.at);
                }
            }
        }
    }
}
