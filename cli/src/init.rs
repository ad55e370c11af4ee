//! `antinode init`: write a complete, valid starter model (an invented scenario with a study and a
//! small absorber design request) to edit from.

use std::io::Write;
use std::path::{Path, PathBuf};

use anyhow::{Context, Result, bail};
use clap::ValueEnum;

/// Which starter model.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum Kind {
    /// A thin-walled tube meshed as shells on two elastic bearings (the `tubes` generator with
    /// regions).
    Tube,
    /// A flat panel meshed as shells, simply supported on its edges (the `panels` generator with
    /// regions).
    Panel,
    /// A beam as a straight run of beam elements on two pins (`lines`).
    Beam,
}

impl Kind {
    fn name(self) -> &'static str {
        match self {
            Self::Tube => "tube",
            Self::Panel => "panel",
            Self::Beam => "beam",
        }
    }

    /// The starter model's JSON text.
    fn text(self) -> &'static str {
        match self {
            Self::Tube => TUBE,
            Self::Panel => PANEL,
            Self::Beam => BEAM,
        }
    }
}

const TUBE: &str = r#"{
  "title": "Invented starter model: thin-walled aluminium tube (80 mm x 2 mm, 1.2 m) with 0.3 kg end fittings on two elastic bearings and a torsionally soft drive coupling, shaken on top at a quarter of its length",
  "materials": {
    "aluminium": {"youngs_modulus": 7.0e10, "poisson_ratio": 0.33, "density": 2700}
  },
  "tubes": [
    {"name": "tube", "length": 1.2, "outer_diameter": 0.08, "wall_thickness": 0.002, "material": "aluminium",
     "fidelity": "shell", "around": 24, "along": 48,
     "fittings": {"start": {"mass": 0.3, "axial_inertia": 2.0e-4, "transverse_inertia": 1.5e-4},
                  "end": {"mass": 0.3, "axial_inertia": 2.0e-4, "transverse_inertia": 1.5e-4}},
     "ends": {"start": {"bearing": {"ux": 2.0e7, "uy": 5.0e6, "uz": 5.0e6, "rx": 2.0e3}},
              "end": {"bearing": {"uy": 5.0e6, "uz": 5.0e6}}}}
  ],
  "regions": {
    "drive": {"tube": "tube", "from": 0.25, "to": 0.25, "angle_deg": [90, 90]},
    "top strip": {"tube": "tube", "from": 0.1, "to": 0.9, "angle_deg": [75, 105]}
  },
  "study": {
    "band_hz": [50, 400],
    "excitation": [{"at": {"region": "drive"}, "direction": "z", "amplitude": 1.0}],
    "response_points": [{"name": "drive point", "at": {"region": "drive"}, "direction": "z"}],
    "absorber_design": {"count": 1, "mass_each": 0.04, "candidates": [{"region": "top strip"}], "directions": ["z"]}
  }
}
"#;

const PANEL: &str = r#"{
  "title": "Invented starter model: aluminium cover panel (0.5 m x 0.4 m x 2 mm) screwed along its four edges, shaken near one corner",
  "materials": {
    "aluminium": {"youngs_modulus": 7.0e10, "poisson_ratio": 0.33, "density": 2700}
  },
  "panels": [
    {"name": "panel", "size": [0.5, 0.4], "thickness": 0.002, "material": "aluminium", "divisions": [25, 20],
     "edges": {"x0": "simply_supported", "x1": "simply_supported", "y0": "simply_supported", "y1": "simply_supported"}}
  ],
  "regions": {
    "drive": {"panel": "panel", "point": [0.14, 0.1]},
    "inner": {"panel": "panel", "box": [[0.1, 0.1], [0.4, 0.3]]}
  },
  "study": {
    "band_hz": [30, 160],
    "excitation": [{"at": {"region": "drive"}, "direction": "z", "amplitude": 1.0}],
    "response_points": [{"name": "drive point", "at": {"region": "drive"}, "direction": "z"}],
    "absorber_design": {"count": 1, "mass_each": 0.03, "candidates": [{"region": "inner"}], "directions": ["z"]}
  }
}
"#;

const BEAM: &str = r#"{
  "title": "Invented starter model: steel flat bar (40 mm x 10 mm, 1 m) on two pins, shaken at 30 % of its span",
  "materials": {
    "steel": {"youngs_modulus": 2.1e11, "poisson_ratio": 0.3, "density": 7850}
  },
  "sections": {
    "bar": {"rectangle": {"width": 0.04, "height": 0.01}}
  },
  "lines": [
    {"name": "beam", "from": [0, 0, 0], "to": [1.0, 0, 0], "elements": 40, "section": "bar", "material": "steel"}
  ],
  "supports": [
    {"at": {"line": "beam", "at": 0.0}, "fixed": ["ux", "uy", "uz", "rx"]},
    {"at": {"line": "beam", "at": 1.0}, "fixed": ["uy", "uz"]}
  ],
  "study": {
    "band_hz": [10, 120],
    "excitation": [{"at": {"line": "beam", "at": 0.3}, "direction": "z", "amplitude": 1.0}],
    "response_points": [{"name": "drive point", "at": {"line": "beam", "at": 0.3}, "direction": "z"}],
    "absorber_design": {"count": 1, "mass_each": 0.1, "candidates": [{"line": "beam", "from": 0.05, "to": 0.95}],
                        "directions": ["z"]}
  }
}
"#;

/// Writes the starter model of `kind` to `out` (default `<kind>.json` in the working folder),
/// never over an existing file.
pub fn run(kind: Kind, out: Option<PathBuf>) -> Result<()> {
    let path = out.unwrap_or_else(|| PathBuf::from(format!("{}.json", kind.name())));
    write_new(&path, kind.text().as_bytes())?;
    println!("wrote {} (a starter {} model); next: antinode check {0}", path.display(), kind.name());
    Ok(())
}

/// Creates `path` with `bytes`, failing if it exists; a failed write leaves no file behind.
fn write_new(path: &Path, bytes: &[u8]) -> Result<()> {
    if path.exists() {
        bail!("{} already exists; give another file with --out, or remove it first", path.display());
    }
    let mut file = std::fs::OpenOptions::new().write(true).create_new(true).open(path).with_context(|| {
        if path.exists() {
            format!("{} already exists; give another file with --out, or remove it first", path.display())
        } else {
            format!("cannot create {}", path.display())
        }
    })?;
    let written = file.write_all(bytes).and_then(|()| file.sync_all());
    if let Err(e) = written {
        drop(file);
        let _ = std::fs::remove_file(path);
        return Err(e).with_context(|| format!("cannot write {}", path.display()));
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn every_starter_model_is_valid_and_says_it_is_invented() {
        for kind in [Kind::Tube, Kind::Panel, Kind::Beam] {
            let model = antinode_mesh::parse_model(kind.text(), Path::new("starter.json"))
                .unwrap_or_else(|e| panic!("{}: {e}", kind.name()));
            assert!(model.title.starts_with("Invented"), "{}: {}", kind.name(), model.title);
            let s = antinode_mesh::validate(&model).unwrap_or_else(|e| panic!("{}: {e}", kind.name()));
            assert!(s.study.as_ref().is_some_and(|st| st.design.is_some()), "{}: a design request", kind.name());
        }
    }
}
