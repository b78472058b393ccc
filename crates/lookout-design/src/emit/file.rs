//! Writing an output file whole or not at all, without touching anything
//! but the file asked for.
//!
//! 1. The target is looked at without following links: a missing path or a
//!    regular file is written; a symbolic link is followed only if it ends at
//!    a regular file (the resolved file is then replaced, and the link kept);
//!    a directory, device, FIFO, socket or dangling link is refused.
//! 2. The bytes go to a new temporary file in the directory of the file
//!    replaced, created exclusively (`create_new`, O_EXCL: an existing file or
//!    link of that name is never opened), with a name unique to this process.
//! 3. The temporary gets the replaced file's permissions (a 0600 file stays
//!    0600; the owner is that of the writer), is flushed to disk, and is
//!    renamed over the target in one step, so a reader sees the old file or
//!    the new one. On every failure the temporary is removed.

use crate::design::DesignError;
use std::fs::{self, File, OpenOptions};
use std::io::{self, Write as _};
use std::path::{Path, PathBuf};
use std::sync::atomic::{AtomicU32, Ordering};

/// Where [`write_file`] put the bytes.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Written {
    /// The regular file written (the link's target when `path` was a link).
    pub file: PathBuf,
    /// Whether `path` was a symbolic link, kept, to `file`.
    pub through_link: bool,
}

/// Writes `bytes` to `path` as described in the module documentation.
pub fn write_file(path: &Path, bytes: &[u8]) -> Result<Written, DesignError> {
    write_file_with(path, |w| w.write_all(bytes))
}

/// Like [`write_file`], with the content written by `content` as it is
/// produced (so it need not be held in memory); when `content` fails the
/// target is left as it was.
pub fn write_file_with(
    path: &Path,
    content: impl FnOnce(&mut dyn io::Write) -> io::Result<()>,
) -> Result<Written, DesignError> {
    let target = resolve(path)?;
    let dir = match target.file.parent() {
        Some(d) if !d.as_os_str().is_empty() => d.to_path_buf(),
        _ => PathBuf::from("."),
    };
    let (tmp, mut file) = create_temporary(&dir, &target.file).map_err(|e| {
        io_error(
            path,
            &format!("cannot create a temporary file in {}: {e}", dir.display()),
        )
    })?;
    let result = fill(&mut file, content, target.permissions)
        .and_then(|()| fs::rename(&tmp, &target.file))
        .map_err(|e| io_error(path, &format!("cannot write: {e}")));
    drop(file);
    if result.is_err() {
        let _ = fs::remove_file(&tmp);
    }
    result.map(|()| Written {
        file: target.file,
        through_link: target.through_link,
    })
}

struct Target {
    file: PathBuf,
    through_link: bool,
    permissions: Option<fs::Permissions>,
}

fn resolve(path: &Path) -> Result<Target, DesignError> {
    let meta = match fs::symlink_metadata(path) {
        Err(e) if e.kind() == io::ErrorKind::NotFound => {
            return Ok(Target {
                file: path.to_path_buf(),
                through_link: false,
                permissions: None,
            });
        }
        Err(e) => return Err(io_error(path, &format!("cannot inspect it: {e}"))),
        Ok(m) => m,
    };
    if meta.is_file() {
        return Ok(Target {
            file: path.to_path_buf(),
            through_link: false,
            permissions: Some(meta.permissions()),
        });
    }
    if !meta.file_type().is_symlink() {
        return Err(refused(
            path,
            &format!(
                "is {}, not a regular file; refusing to replace it",
                kind(&meta)
            ),
        ));
    }
    let file = fs::canonicalize(path).map_err(|e| {
        refused(
            path,
            &format!("is a symbolic link that does not resolve ({e}); refusing to replace it"),
        )
    })?;
    let meta = fs::metadata(&file).map_err(|e| io_error(path, &e.to_string()))?;
    if !meta.is_file() {
        return Err(refused(
            path,
            &format!(
                "is a symbolic link to {} ({}), not to a regular file; refusing to replace it",
                file.display(),
                kind(&meta)
            ),
        ));
    }
    Ok(Target {
        file,
        through_link: true,
        permissions: Some(meta.permissions()),
    })
}

/// Plain words for a file type that is not a regular file.
fn kind(meta: &fs::Metadata) -> &'static str {
    let t = meta.file_type();
    if t.is_dir() {
        return "a directory";
    }
    #[cfg(unix)]
    {
        use std::os::unix::fs::FileTypeExt as _;
        if t.is_block_device() || t.is_char_device() {
            return "a device";
        }
        if t.is_fifo() {
            return "a FIFO (named pipe)";
        }
        if t.is_socket() {
            return "a socket";
        }
    }
    "not a regular file"
}

/// A new file `.NAME.PID-K.tmp.EXT` in `dir`, created exclusively; the
/// extension is kept so tools that choose a format by it still can.
fn create_temporary(dir: &Path, target: &Path) -> io::Result<(PathBuf, File)> {
    static COUNTER: AtomicU32 = AtomicU32::new(0);
    let name = target
        .file_name()
        .map_or_else(|| "output".into(), |n| n.to_string_lossy().into_owned());
    let ext = target
        .extension()
        .map(|e| format!(".{}", e.to_string_lossy()))
        .unwrap_or_default();
    let mut last = io::Error::other("no name tried");
    for _ in 0..64 {
        let k = COUNTER.fetch_add(1, Ordering::Relaxed);
        let tmp = dir.join(format!(".{name}.{}-{k}.tmp{ext}", std::process::id()));
        match OpenOptions::new().write(true).create_new(true).open(&tmp) {
            Ok(f) => return Ok((tmp, f)),
            Err(e) if e.kind() == io::ErrorKind::AlreadyExists => last = e,
            Err(e) => return Err(e),
        }
    }
    Err(last)
}

fn fill(
    file: &mut File,
    content: impl FnOnce(&mut dyn io::Write) -> io::Result<()>,
    permissions: Option<fs::Permissions>,
) -> io::Result<()> {
    let mut buffered = io::BufWriter::new(&mut *file);
    content(&mut buffered)?;
    buffered.flush()?;
    drop(buffered);
    if let Some(p) = permissions {
        file.set_permissions(p)?;
    }
    file.sync_all()
}

fn refused(path: &Path, message: &str) -> DesignError {
    DesignError::RefusedOutput {
        path: path.display().to_string(),
        message: message.to_string(),
    }
}

fn io_error(path: &Path, message: &str) -> DesignError {
    DesignError::Io {
        path: path.display().to_string(),
        message: message.to_string(),
    }
}

/// Reads the file at `path` whole, but no more than `limit` bytes: a larger
/// file (or an endless one such as `/dev/zero` or a pipe) is refused with
/// an `InvalidData` error saying so, after reading `limit + 1` bytes at most.
/// Text is checked to be UTF-8 by the caller.
pub fn read_limited(path: &Path, limit: u64) -> io::Result<Vec<u8>> {
    use std::io::Read as _;
    let file = File::open(path)?;
    if file.metadata()?.is_dir() {
        return Err(io::Error::new(
            io::ErrorKind::InvalidInput,
            "is a directory",
        ));
    }
    let mut bytes = Vec::new();
    file.take(limit.saturating_add(1)).read_to_end(&mut bytes)?;
    if bytes.len() as u64 > limit {
        return Err(io::Error::new(
            io::ErrorKind::InvalidData,
            format!("larger than {} (the most read)", size_text(limit)),
        ));
    }
    Ok(bytes)
}

/// `limit` in MiB or bytes, for messages.
fn size_text(limit: u64) -> String {
    if limit >= 1 << 20 && limit.is_multiple_of(1 << 20) {
        format!("{} MiB", limit >> 20)
    } else {
        format!("{limit} bytes")
    }
}

/// [`read_limited`] as UTF-8 text.
pub fn read_text_limited(path: &Path, limit: u64) -> io::Result<String> {
    String::from_utf8(read_limited(path, limit)?)
        .map_err(|_| io::Error::new(io::ErrorKind::InvalidData, "is not UTF-8 text"))
}
