//! Writing results: every output goes to a temporary file beside its target and is renamed
//! over it only when all of a run's outputs are complete, so a failed run leaves nothing
//! behind and an existing file is replaced only by a whole one.

use std::io::Write;
use std::path::{Path, PathBuf};

use crate::failure::{Failure, Outcome};

/// The absolute form of `path` for comparisons: its folder resolved (symbolic links too) and
/// its file name, so that `x.csv` and `./dir/../x.csv` compare equal before either exists.
fn resolved(path: &Path) -> Option<PathBuf> {
    if let Ok(p) = path.canonicalize() {
        return Some(p);
    }
    let parent = match path.parent() {
        Some(p) if !p.as_os_str().is_empty() => p.to_path_buf(),
        _ => PathBuf::from("."),
    };
    Some(parent.canonicalize().ok()?.join(path.file_name()?))
}

/// Refuses, before any work: an output that is one of the inputs, two outputs on one path,
/// and an output whose folder does not exist. `outputs` pairs each path with its option.
pub fn check_targets(inputs: &[&Path], outputs: &[(&str, &Path)]) -> Outcome<()> {
    let inputs: Vec<PathBuf> = inputs.iter().filter_map(|p| resolved(p)).collect();
    let mut seen: Vec<(PathBuf, &str)> = Vec::new();
    for &(option, path) in outputs {
        if path.file_name().is_none() || path.is_dir() {
            return Err(Failure::usage(format!(
                "{option} {}: is a folder; give a file name",
                path.display()
            )));
        }
        let Some(target) = resolved(path) else {
            let folder = path.parent().unwrap_or(Path::new("."));
            return Err(Failure::runtime(format!(
                "{option} {}: the folder {} does not exist; create it or choose another path",
                path.display(),
                folder.display()
            )));
        };
        if inputs.contains(&target) {
            return Err(Failure::usage(format!(
                "{option} {}: is the input file; writing it would destroy the recording, \
                 choose another path",
                path.display()
            )));
        }
        if let Some((_, other)) = seen.iter().find(|(p, _)| *p == target) {
            return Err(Failure::usage(format!(
                "{option} {}: {other} writes the same file; give each output its own path",
                path.display()
            )));
        }
        seen.push((target, option));
    }
    Ok(())
}

/// Writes every `(path, bytes)` or none: all go to temporary files first, then each is
/// renamed over its target.
pub fn write_all(files: &[(&Path, &[u8])]) -> Outcome<()> {
    let mut staged = Vec::with_capacity(files.len());
    for &(path, bytes) in files {
        let folder = match path.parent() {
            Some(p) if !p.as_os_str().is_empty() => p,
            _ => Path::new("."),
        };
        let fail = |e: std::io::Error| {
            Failure::runtime(format!(
                "{}: cannot write in {} ({}); choose a folder you may write to",
                path.display(),
                folder.display(),
                short_io(&e)
            ))
        };
        let mut temp = tempfile::Builder::new()
            .prefix(".leakless-")
            .suffix(".part")
            .tempfile_in(folder)
            .map_err(fail)?;
        temp.write_all(bytes).map_err(fail)?;
        temp.as_file().sync_all().map_err(fail)?;
        staged.push((temp, path));
    }
    // Dropping the staged files on an early return deletes them: nothing is left behind.
    for (temp, path) in staged {
        temp.persist(path).map_err(|e| {
            Failure::runtime(format!(
                "{}: cannot replace it ({}); choose another path",
                path.display(),
                short_io(&e.error)
            ))
        })?;
    }
    Ok(())
}

fn short_io(e: &std::io::Error) -> String {
    match e.kind() {
        std::io::ErrorKind::PermissionDenied => "permission denied".to_string(),
        std::io::ErrorKind::ReadOnlyFilesystem => "read-only file system".to_string(),
        std::io::ErrorKind::NotFound => "no such folder".to_string(),
        _ => e.to_string(),
    }
}

/// Where a subcommand's main output goes: a file (`--out`) or standard output.
pub struct Sink<'a> {
    /// `--out`, if given.
    pub out: Option<&'a Path>,
}

impl Sink<'_> {
    /// Writes `main` to `--out` (with any extra files, all or none) or to standard output
    /// (after the extra files are written).
    pub fn finish(&self, main: &[u8], extra: &[(&Path, &[u8])]) -> Outcome<()> {
        let mut files: Vec<(&Path, &[u8])> = Vec::new();
        if let Some(out) = self.out {
            files.push((out, main));
        }
        files.extend_from_slice(extra);
        write_all(&files)?;
        if self.out.is_none() {
            let mut stdout = std::io::stdout().lock();
            stdout
                .write_all(main)
                .and_then(|()| stdout.flush())
                .map_err(|e| Failure::runtime(format!("standard output: {e}")))?;
        }
        Ok(())
    }
}

/// Pretty JSON of `value` with a final newline.
pub fn json_text(value: &impl serde::Serialize) -> Outcome<String> {
    let mut text =
        serde_json::to_string_pretty(value).map_err(|e| Failure::runtime(format!("JSON: {e}")))?;
    text.push('\n');
    Ok(text)
}

/// Prints a note about a run to standard error.
pub fn note(command: &str, text: &str) {
    eprintln!("leakless {command}: note: {text}");
}
