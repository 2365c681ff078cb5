//! Reading inputs and writing outputs with messages that name the file.

use std::path::Path;

/// Read a whole file; the error names it.
pub fn read_bytes(path: &Path) -> Result<Vec<u8>, String> {
    std::fs::read(path).map_err(|e| format!("cannot read {}: {e}", path.display()))
}

/// Read a whole text file; the error names it.
pub fn read_text(path: &Path) -> Result<String, String> {
    let bytes = read_bytes(path)?;
    String::from_utf8(bytes).map_err(|_| format!("{} is not UTF-8 text", path.display()))
}

/// Write a file completely or not at all: write a temporary sibling, then
/// rename it over the target, so a reader never sees half a file.
pub fn write_atomic(path: &Path, contents: &[u8]) -> Result<(), String> {
    if let Some(dir) = path.parent() {
        if !dir.as_os_str().is_empty() {
            std::fs::create_dir_all(dir)
                .map_err(|e| format!("cannot create folder {}: {e}", dir.display()))?;
        }
    }
    let mut tmp = path.as_os_str().to_owned();
    tmp.push(".partial");
    let tmp = std::path::PathBuf::from(tmp);
    std::fs::write(&tmp, contents).map_err(|e| format!("cannot write {}: {e}", tmp.display()))?;
    std::fs::rename(&tmp, path).map_err(|e| {
        let _ = std::fs::remove_file(&tmp);
        format!("cannot write {}: {e}", path.display())
    })
}

/// Prefix a core error with the file it came from.
pub fn in_file(path: &Path) -> impl Fn(pairsight_core::Error) -> String + '_ {
    move |e| format!("{}: {e}", path.display())
}
