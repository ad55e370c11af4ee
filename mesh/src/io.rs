//! Reading model files, the model's JSON Schema, and atomic file writes.

use std::io::Write;
use std::path::Path;

use crate::error::ModelError;
use crate::model::Model;

/// Reads and parses a model file (JSON). Only the JSON shape is checked; call [`crate::validate`]
/// next.
///
/// # Errors
/// [`ModelError::Io`] if the file cannot be read, [`ModelError::Parse`] with the JSON path, line and
/// column of the first problem otherwise.
pub fn load_model(path: &Path) -> Result<Model, ModelError> {
    let text = std::fs::read_to_string(path).map_err(|source| ModelError::Io { path: path.to_path_buf(), source })?;
    parse_model(&text, path)
}

/// Parses model JSON; `path` only names the source in messages.
///
/// # Errors
/// [`ModelError::Parse`] with the JSON path, line and column of the first problem.
pub fn parse_model(text: &str, path: &Path) -> Result<Model, ModelError> {
    let mut de = serde_json::Deserializer::from_str(text);
    let result: Result<Model, _> = serde_path_to_error::deserialize(&mut de);
    match result {
        Ok(m) => {
            // Trailing characters after the document are an error too.
            de.end().map_err(|e| parse_error(path, ".".into(), &e))?;
            Ok(m)
        }
        Err(e) => {
            let json_path = e.path().to_string();
            Err(parse_error(path, json_path, e.inner()))
        }
    }
}

fn parse_error(path: &Path, json_path: String, e: &serde_json::Error) -> ModelError {
    // serde_json appends " at line L column C"; we report those separately.
    let full = e.to_string();
    let message = match full.rfind(" at line ") {
        Some(pos) => full[..pos].to_string(),
        None => full,
    };
    ModelError::Parse { path: path.to_path_buf(), json_path, line: e.line(), column: e.column(), message }
}

/// The JSON Schema of the model file, as pretty JSON text ending in a newline.
pub fn model_schema_json() -> String {
    let schema = schemars::schema_for!(Model);
    let mut s = serde_json::to_string_pretty(&schema).unwrap_or_default();
    s.push('\n');
    s
}

/// Writes `bytes` to `path` atomically: to a temporary file in the same directory, flushed, then
/// renamed over `path`. A failed or interrupted write leaves no partial file at `path`.
///
/// # Errors
/// The underlying I/O error.
pub fn write_atomic(path: &Path, bytes: &[u8]) -> std::io::Result<()> {
    let dir = match path.parent() {
        Some(p) if !p.as_os_str().is_empty() => p,
        _ => Path::new("."),
    };
    let name = path.file_name().map(|n| n.to_string_lossy().into_owned()).unwrap_or_default();
    let tmp = dir.join(format!(".{name}.{}.tmp", std::process::id()));
    let result = (|| {
        let mut f = std::fs::File::create(&tmp)?;
        f.write_all(bytes)?;
        f.sync_all()?;
        std::fs::rename(&tmp, path)
    })();
    if result.is_err() {
        let _ = std::fs::remove_file(&tmp);
    }
    result
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn parse_error_names_json_path_and_line() {
        let text =
            "{\n  \"materials\": {\"al\": {\"youngs_modulus\": \"big\", \"poisson_ratio\": 0.3, \"density\": 2700}}\n}";
        let err = parse_model(text, Path::new("m.json")).err().map(|e| e.to_string()).unwrap_or_default();
        assert!(err.contains("materials.al.youngs_modulus"), "{err}");
        assert!(err.contains("line 2"), "{err}");
        assert!(err.starts_with("m.json"), "{err}");
    }

    #[test]
    fn unknown_fields_are_rejected() {
        let text = r#"{"nodez": []}"#;
        let err = parse_model(text, Path::new("m.json")).err().map(|e| e.to_string()).unwrap_or_default();
        assert!(err.contains("unknown field `nodez`"), "{err}");
    }

    #[test]
    fn atomic_write_replaces_whole_file() {
        let dir = std::env::temp_dir().join(format!("antinode-io-{}", std::process::id()));
        std::fs::create_dir_all(&dir).ok();
        let p = dir.join("x.txt");
        write_atomic(&p, b"first").ok();
        write_atomic(&p, b"second").ok();
        assert_eq!(std::fs::read_to_string(&p).ok().as_deref(), Some("second"));
        let leftovers = std::fs::read_dir(&dir).map(|r| r.count()).unwrap_or(0);
        assert_eq!(leftovers, 1);
        std::fs::remove_dir_all(&dir).ok();
    }
}
