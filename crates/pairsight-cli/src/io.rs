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

/// Write a file completely or not at all: write a temporary sibling (same
/// folder, so the rename cannot cross file systems), flush it to disk, then
/// rename it over the target. A reader, or a later run after a crash, sees
/// either the old file or the whole new one, never half a file. On any
/// failure the temporary file is removed and the target is left as it was.
/// Every command writes its files through here.
pub fn write_atomic(path: &Path, contents: &[u8]) -> Result<(), String> {
    use std::io::Write as _;
    let dir = match path.parent() {
        Some(d) if !d.as_os_str().is_empty() => d,
        _ => Path::new("."),
    };
    std::fs::create_dir_all(dir)
        .map_err(|e| format!("cannot create folder {}: {e}", dir.display()))?;
    let name = path
        .file_name()
        .ok_or_else(|| format!("cannot write {}: it names no file", path.display()))?;
    // Hidden, and unique to this process, so two runs never share one.
    let mut tmp_name = std::ffi::OsString::from(".");
    tmp_name.push(name);
    tmp_name.push(format!(".{}.partial", std::process::id()));
    let tmp = dir.join(tmp_name);
    let written = std::fs::File::create(&tmp).and_then(|mut f| {
        f.write_all(contents)?;
        f.sync_all()
    });
    if let Err(e) = written {
        let _ = std::fs::remove_file(&tmp);
        return Err(format!("cannot write {}: {e}", path.display()));
    }
    std::fs::rename(&tmp, path).map_err(|e| {
        let _ = std::fs::remove_file(&tmp);
        format!("cannot write {}: {e}", path.display())
    })?;
    // The rename itself is durable once the folder is flushed; a folder
    // that cannot be opened for that (some file systems) is not an error.
    if let Ok(d) = std::fs::File::open(dir) {
        let _ = d.sync_all();
    }
    Ok(())
}

/// Prefix a core error with the file it came from.
pub fn in_file(path: &Path) -> impl Fn(pairsight_core::Error) -> String + '_ {
    move |e| format!("{}: {e}", path.display())
}
