//! What a scan found ([`Library`]) and how ngspice looks a model up in it: a plain model first,
//! then the bins `NAME.N` whose W and L ranges hold the device.

use crate::diagnostic::{Diagnostic, Severity, Source as DiagnosticSource};
use crate::models::error::{LookupError, Problem};
use crate::models::types::{DeviceType, FileId, Limit, Location, Model, ModelType, SourceFile};

/// What a scan found: the files it read, the models, and what went wrong.
#[derive(Debug, Clone)]
pub struct Library {
    /// Every file read, the entry file first; [`FileId`] indexes it.
    pub files: Vec<SourceFile>,
    /// The section read, as asked for; `None` when the library was read whole.
    pub section: Option<String>,
    /// The models in the order ngspice defines them.
    pub models: Vec<Model>,
    /// The subcircuits defined outside any other, lowercased, with their names' places.
    pub subcircuits: Vec<(String, Location)>,
    /// Where an `.option` sets `scale`, which multiplies every W and L before ngspice picks a bin.
    pub scale: Option<Location>,
    /// Errors: ngspice would not read the library as asked.
    pub errors: Vec<Problem>,
    /// Warnings: ngspice reads the library, but perhaps not as its author meant.
    pub warnings: Vec<Problem>,
}

/// A model name and the models an instance of it can get.
#[derive(Debug, Clone, PartialEq)]
pub enum ModelSet<'a> {
    /// A plain model: every size.
    Single(&'a Model),
    /// Binned models `NAME.N`, in the order ngspice tries them.
    Binned(Vec<&'a Model>),
}

/// How a device size is served.
#[derive(Debug, Clone, PartialEq)]
pub enum Served<'a> {
    /// By a plain model, at any size.
    Plain(&'a Model),
    /// By this bin.
    Bin(&'a Model),
    /// The scan cannot tell; why.
    Unchecked(String),
}

impl Library {
    /// The model set an instance named `name` of type `device` gets, as ngspice looks it up: a plain
    /// model of that name first, then the bins `name.N`.
    pub fn lookup(&self, name: &str, device: DeviceType) -> Result<ModelSet<'_>, LookupError> {
        let name = name.to_ascii_lowercase();
        let visible = || self.models.iter().filter(|model| model.subcircuit.is_none());
        let check_type = |model: &Model| {
            if model.model_type == ModelType::Device(device) {
                Ok(())
            } else {
                Err(LookupError::WrongType {
                    name: model.name.clone(),
                    found: model.model_type.clone(),
                    wanted: device,
                    at: model.at,
                })
            }
        };
        if let Some(model) = visible().find(|model| model.name == name) {
            check_type(model)?;
            return Ok(ModelSet::Single(model));
        }
        let bins: Vec<&Model> = visible().filter(|model| model.bin.as_ref().is_some_and(|b| b.base == name)).collect();
        if !bins.is_empty() {
            for model in &bins {
                check_type(model)?;
                if model.level.is_binned() == Some(false) {
                    return Err(LookupError::NotBinned {
                        name: model.name.clone(),
                        base: name,
                        level: model.level.to_string(),
                        at: model.at,
                    });
                }
            }
            return Ok(ModelSet::Binned(bins));
        }
        if let Some(model) = self.models.iter().find(|model| model.subcircuit.is_some() && model.name == name) {
            return Err(LookupError::InsideSubcircuit {
                name,
                subcircuit: model.subcircuit.clone().unwrap_or_default(),
                at: model.at,
            });
        }
        if let Some((_, at)) = self.subcircuits.iter().find(|(subcircuit, _)| *subcircuit == name) {
            return Err(LookupError::Subcircuit { name, at: *at });
        }
        let mut known: Vec<String> = Vec::new();
        for model in visible().filter(|model| model.model_type == ModelType::Device(device)) {
            let shown = model.bin.as_ref().map_or(&model.name, |bin| &bin.base);
            if !known.contains(shown) {
                known.push(shown.clone());
            }
        }
        let scope = match &self.section {
            Some(section) => format!("section '{section}' of the library"),
            None => "the library".to_string(),
        };
        Err(LookupError::NotFound { name, device, scope, known })
    }

    /// Whether an instance of `name` (type `device`) with finger width `width_m` and length
    /// `length_m` (metres, as on the instance line) finds a model.
    pub fn check_device(
        &self,
        name: &str,
        device: DeviceType,
        width_m: f64,
        length_m: f64,
    ) -> Result<Served<'_>, LookupError> {
        let bins = match self.lookup(name, device)? {
            ModelSet::Single(model) => return Ok(Served::Plain(model)),
            ModelSet::Binned(bins) => bins,
        };
        if let Some(at) = self.scale {
            return Ok(Served::Unchecked(format!(
                "the library sets option 'scale' ({}), which multiplies W and L before ngspice picks a bin",
                self.place(at)
            )));
        }
        let mut unchecked = None;
        for &model in &bins {
            let Some(bin) = &model.bin else { continue };
            match (bin.length.contains(length_m), bin.width.contains(width_m)) {
                (Some(true), Some(true)) => return Ok(Served::Bin(model)),
                (Some(_), Some(_)) => {}
                _ => {
                    let missing = [&bin.length.min, &bin.length.max, &bin.width.min, &bin.width.max]
                        .iter()
                        .any(|limit| **limit == Limit::Missing);
                    if !missing && unchecked.is_none() {
                        unchecked = Some(model);
                    }
                }
            }
        }
        if let Some(model) = unchecked {
            let bin = model.bin.as_ref().map(ToString::to_string).unwrap_or_default();
            return Ok(Served::Unchecked(format!(
                "bin '{}' ({bin}) has a limit widthwise does not evaluate ({})",
                model.name,
                self.place(model.at)
            )));
        }
        let mut nearest: Vec<(f64, &Model)> = bins
            .iter()
            .filter_map(|&model| {
                let bin = model.bin.as_ref()?;
                Some((bin.length.distance(length_m)?.hypot(bin.width.distance(width_m)?), model))
            })
            .collect();
        nearest.sort_by(|a, b| a.0.total_cmp(&b.0));
        Err(LookupError::Uncovered {
            name: name.to_ascii_lowercase(),
            width_m,
            length_m,
            nearest: nearest
                .iter()
                .take(2)
                .map(|(_, model)| {
                    format!("{} ({})", model.name, model.bin.as_ref().map(ToString::to_string).unwrap_or_default())
                })
                .collect(),
            nearest_at: nearest.first().map(|(_, model)| model.at),
        })
    }

    /// The file of a location.
    pub fn file(&self, id: FileId) -> &SourceFile {
        &self.files[id.0]
    }

    /// `path:line` of a location.
    pub fn place(&self, at: Location) -> String {
        let file = self.file(at.file);
        let line = crate::diagnostic::line_and_column(&file.text, at.span.start).0;
        format!("{}:{line}", file.path.display())
    }

    /// A problem of the scan as a diagnostic, for the one renderer ([`Diagnostic::render`]):
    /// pointing at its card, or naming the entry file where it has no place.
    pub fn diagnostic(&self, message: impl Into<String>, at: Option<Location>, severity: Severity) -> Diagnostic {
        let diagnostic = Diagnostic { severity, ..Diagnostic::error(message) };
        match at {
            Some(at) => {
                let file = self.file(at.file);
                diagnostic.at(&DiagnosticSource::file(file.path.display().to_string(), file.text.as_str()), at.span)
            }
            None => match self.files.first() {
                Some(entry) => diagnostic.within(&DiagnosticSource::file(entry.path.display().to_string(), "")),
                None => diagnostic,
            },
        }
    }
}
