//! A run folder as a whole: reserved before a long computation (so an
//! unwritable or busy folder is found at once, not after hours), and marked
//! complete by a manifest written last — every file with its size and
//! SHA-256 — after the set has been synced to disk once. Readers refuse a
//! folder without a complete manifest.

use std::io::Read;
use std::path::{Path, PathBuf};

use serde::{Deserialize, Serialize};
use sha2::{Digest, Sha256};

use crate::export::{ExportError, write_atomic};

/// The manifest's file name.
pub const MANIFEST: &str = "manifest.json";
/// The first field of a manifest: its format and version.
pub const MANIFEST_FORMAT: &str = "anlage-run-manifest 1";
/// The marker of a folder an anlage process is writing into.
pub const BUSY: &str = ".anlage-busy";

/// One file of an output set.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct ManifestEntry {
    /// File name in the folder.
    pub name: String,
    /// Size, bytes.
    pub bytes: u64,
    /// SHA-256, hex.
    pub sha256: String,
}

/// The manifest of a complete output set.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Manifest {
    /// [`MANIFEST_FORMAT`].
    pub format: String,
    /// The anlage version that wrote the set.
    pub anlage_version: String,
    /// Every file of the set.
    pub files: Vec<ManifestEntry>,
}

/// SHA-256 of a file, hex.
///
/// # Errors
/// The read's error.
pub fn sha256_of(path: &Path) -> std::io::Result<String> {
    let mut file = std::fs::File::open(path)?;
    let mut hasher = Sha256::new();
    let mut buf = vec![0u8; 1 << 20];
    loop {
        let n = file.read(&mut buf)?;
        if n == 0 {
            break;
        }
        hasher.update(&buf[..n]);
    }
    Ok(hasher.finalize().iter().map(|b| format!("{b:02x}")).collect())
}

/// Flushes everything written to the folder's file system to disk: one
/// `syncfs` on Linux, else each named file's `fsync`.
fn sync_folder(dir: &Path, names: &[String]) -> std::io::Result<()> {
    #[cfg(target_os = "linux")]
    {
        use std::os::fd::AsRawFd;
        let _ = names;
        let d = std::fs::File::open(dir)?;
        // SAFETY: `syncfs` only reads the descriptor, which `d` keeps open.
        if unsafe { libc::syncfs(d.as_raw_fd()) } != 0 {
            return Err(std::io::Error::last_os_error());
        }
        Ok(())
    }
    #[cfg(not(target_os = "linux"))]
    {
        for n in names {
            std::fs::File::open(dir.join(n))?.sync_all()?;
        }
        Ok(())
    }
}

/// Marks the set `names` in `dir` complete: syncs the folder once, then
/// writes [`MANIFEST`] (each file's size and SHA-256) atomically and syncs it.
///
/// # Errors
/// [`ExportError::Io`] if a file cannot be read, hashed or written.
pub fn write_manifest(dir: &Path, names: &[String]) -> Result<(), ExportError> {
    let io = |path: PathBuf| move |source| ExportError::Io { path, source };
    sync_folder(dir, names).map_err(io(dir.to_path_buf()))?;
    let files = names
        .iter()
        .map(|n| {
            let path = dir.join(n);
            let bytes = std::fs::metadata(&path).map_err(io(path.clone()))?.len();
            let sha256 = sha256_of(&path).map_err(io(path.clone()))?;
            Ok(ManifestEntry { name: n.clone(), bytes, sha256 })
        })
        .collect::<Result<Vec<_>, ExportError>>()?;
    let manifest = Manifest { format: MANIFEST_FORMAT.into(), anlage_version: env!("CARGO_PKG_VERSION").into(), files };
    let path = dir.join(MANIFEST);
    write_atomic(&path, |w| {
        serde_json::to_writer_pretty(&mut *w, &manifest)?;
        writeln!(w)
    })?;
    std::fs::File::open(&path).and_then(|f| f.sync_all()).map_err(io(path.clone()))?;
    sync_folder(dir, &[MANIFEST.to_string()]).map_err(io(dir.to_path_buf()))
}

/// Adds (or updates) `names` in the manifest of `dir`, when it has a complete
/// one (pictures redrawn into a run folder, or its rewritten report page,
/// stay part of its set); a named file that is gone (the SVG of a picture
/// redrawn without `--svg`) leaves the set. Only `names` are measured and
/// hashed again; every other entry keeps what the run recorded, so a file
/// changed since then is still found out.
///
/// # Errors
/// [`ExportError::Io`] if a file cannot be read or written.
pub fn add_to_manifest(dir: &Path, names: &[String]) -> Result<(), ExportError> {
    let io = |path: PathBuf| move |source| ExportError::Io { path, source };
    let Ok(text) = std::fs::read_to_string(dir.join(MANIFEST)) else { return Ok(()) };
    let Ok(mut m) = serde_json::from_str::<Manifest>(&text) else { return Ok(()) };
    sync_folder(dir, names).map_err(io(dir.to_path_buf()))?;
    for n in names {
        let path = dir.join(n);
        if !path.exists() {
            m.files.retain(|f| &f.name != n);
            continue;
        }
        let bytes = std::fs::metadata(&path).map_err(io(path.clone()))?.len();
        let entry = ManifestEntry { name: n.clone(), bytes, sha256: sha256_of(&path).map_err(io(path.clone()))? };
        match m.files.iter_mut().find(|f| &f.name == n) {
            Some(f) => *f = entry,
            None => m.files.push(entry),
        }
    }
    let path = dir.join(MANIFEST);
    write_atomic(&path, |w| {
        serde_json::to_writer_pretty(&mut *w, &m)?;
        writeln!(w)
    })
}

/// Removes the manifest: the set in `dir` is about to change.
pub fn unmark(dir: &Path) {
    let _ = std::fs::remove_file(dir.join(MANIFEST));
}

/// Why a folder's output set cannot be trusted, or None when its manifest
/// lists every file with its size, and `hashed` (names) match their SHA-256.
pub fn incomplete(dir: &Path, hashed: &[&str]) -> Option<String> {
    let path = dir.join(MANIFEST);
    let Ok(text) = crate::files::read_text(&path, crate::files::MAX_TABLE_BYTES) else {
        return Some(format!(
            "it has no {MANIFEST}: the run that wrote it did not finish (it was stopped, or the disk filled), or an \
             older anlage wrote it"
        ));
    };
    let Ok(m) = serde_json::from_str::<Manifest>(&text) else {
        return Some(format!("its {MANIFEST} is damaged"));
    };
    for f in &m.files {
        let p = dir.join(&f.name);
        match std::fs::metadata(&p) {
            Err(_) => return Some(format!("{} is missing", f.name)),
            Ok(meta) if meta.len() != f.bytes => {
                return Some(format!("{} has {} bytes, not the {} the manifest lists", f.name, meta.len(), f.bytes));
            }
            Ok(_) => {}
        }
        if hashed.contains(&f.name.as_str()) && sha256_of(&p).ok().as_deref() != Some(f.sha256.as_str()) {
            return Some(format!("{} has changed since the run wrote it (its SHA-256 differs)", f.name));
        }
    }
    None
}

/// A folder reserved for writing: created, checked writable, and marked
/// [`BUSY`] with this process's id until dropped.
#[derive(Debug)]
pub struct Reservation {
    marker: PathBuf,
}

impl Drop for Reservation {
    fn drop(&mut self) {
        let _ = std::fs::remove_file(&self.marker);
    }
}

/// Whether process `pid` is a running (not dead, not a zombie) anlage
/// process; without `/proc`, any marker counts as stale.
fn running_anlage(pid: u32) -> bool {
    let Ok(stat) = std::fs::read_to_string(format!("/proc/{pid}/stat")) else { return false };
    // "pid (comm) state …": the state follows the last ')'.
    let state = stat.rsplit_once(')').and_then(|(_, rest)| rest.split_whitespace().next());
    let comm = std::fs::read_to_string(format!("/proc/{pid}/comm")).unwrap_or_default();
    state.is_some_and(|s| s != "Z" && s != "X") && comm.trim().starts_with("anlage")
}

/// Reserves `dir` before a long computation writes into it.
///
/// # Errors
/// [`ExportError::Io`] when it cannot be created or written, or
/// [`ExportError::Content`] when another running anlage process holds it.
pub fn reserve(dir: &Path) -> Result<Reservation, ExportError> {
    let io = |source| ExportError::Io { path: dir.to_path_buf(), source };
    std::fs::create_dir_all(dir).map_err(io)?;
    let marker = dir.join(BUSY);
    if let Ok(text) = std::fs::read_to_string(&marker)
        && let Ok(pid) = text.trim().parse::<u32>()
        && pid != std::process::id()
        && running_anlage(pid)
    {
        return Err(ExportError::Content {
            path: dir.to_path_buf(),
            message: format!(
                "another anlage process (pid {pid}) is writing into it; wait for it or choose another folder with -o"
            ),
        });
    }
    write_atomic(&marker, |w| writeln!(w, "{}", std::process::id()))?;
    Ok(Reservation { marker })
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A manifest lists sizes and hashes; a changed, shortened or missing
    /// file and a missing manifest are all reported.
    #[test]
    fn manifests_catch_missing_and_changed_files() {
        let dir = std::env::temp_dir().join(format!("anlage-manifest-{}", std::process::id()));
        let _ = std::fs::remove_dir_all(&dir);
        std::fs::create_dir_all(&dir).unwrap();
        std::fs::write(dir.join("a.csv"), "x\n1\n").unwrap();
        std::fs::write(dir.join("b.npy"), [0u8; 64]).unwrap();
        assert!(incomplete(&dir, &[]).unwrap().contains("has no manifest.json"));
        write_manifest(&dir, &["a.csv".into(), "b.npy".into()]).unwrap();
        assert_eq!(incomplete(&dir, &["a.csv", "b.npy"]), None);
        std::fs::write(dir.join("a.csv"), "x\n2\n").unwrap();
        assert!(incomplete(&dir, &["a.csv"]).unwrap().contains("a.csv has changed"));
        assert_eq!(incomplete(&dir, &[]), None, "sizes alone cannot see an equal-length change");
        std::fs::write(dir.join("b.npy"), [0u8; 10]).unwrap();
        assert!(incomplete(&dir, &[]).unwrap().contains("b.npy has 10 bytes"));
        std::fs::remove_file(dir.join("b.npy")).unwrap();
        assert!(incomplete(&dir, &[]).unwrap().contains("b.npy is missing"));
        std::fs::remove_dir_all(&dir).unwrap();
    }

    /// The marker goes when the reservation is dropped; a marker of a process
    /// that is not a running anlage is stale and does not block. (A folder
    /// held by a running anlage is refused: tested from the command line.)
    #[test]
    fn busy_folders_are_refused() {
        let dir = std::env::temp_dir().join(format!("anlage-busy-{}", std::process::id()));
        let _ = std::fs::remove_dir_all(&dir);
        {
            let _r = reserve(&dir).unwrap();
            assert!(dir.join(BUSY).exists());
        }
        assert!(!dir.join(BUSY).exists());
        // A marker left by a process that is gone (or is not anlage) is stale.
        let parent = std::os::unix::process::parent_id();
        std::fs::write(dir.join(BUSY), parent.to_string()).unwrap();
        assert!(reserve(&dir).is_ok());
        std::fs::remove_dir_all(&dir).unwrap();
    }
}
