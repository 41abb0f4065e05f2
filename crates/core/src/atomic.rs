//! Writing output files so that a reader never sees half a file.

use std::fs::File;
use std::io::{self, BufWriter, Write};
use std::path::{Path, PathBuf};

/// Writes `path` atomically: the content goes to a temporary file in the same
/// folder, is flushed and synced, then renamed over `path`. If `write` fails,
/// the temporary file is removed and `path` is untouched.
///
/// # Errors
/// Any I/O error, with the file name in its message.
pub fn write_atomically<F>(path: &Path, write: F) -> io::Result<()>
where
    F: FnOnce(&mut BufWriter<File>) -> io::Result<()>,
{
    let temporary = temporary_name(path);
    let result = (|| {
        let file = File::create(&temporary)?;
        let mut writer = BufWriter::new(file);
        write(&mut writer)?;
        writer.flush()?;
        writer.get_ref().sync_all()?;
        drop(writer);
        std::fs::rename(&temporary, path)
    })();
    if result.is_err() {
        let _ = std::fs::remove_file(&temporary);
    }
    result.map_err(|e| io::Error::new(e.kind(), format!("writing {}: {e}", path.display())))
}

fn temporary_name(path: &Path) -> PathBuf {
    let mut name = path
        .file_name()
        .map(|n| n.to_os_string())
        .unwrap_or_default();
    name.push(format!(".partial-{}", std::process::id()));
    path.with_file_name(name)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn failed_write_leaves_no_file_and_keeps_the_old_one() {
        let dir = std::env::temp_dir().join(format!("echobench-atomic-{}", std::process::id()));
        std::fs::create_dir_all(&dir).unwrap();
        let path = dir.join("out.txt");
        write_atomically(&path, |w| w.write_all(b"first")).unwrap();
        let failed = write_atomically(&path, |w| {
            w.write_all(b"second")?;
            Err(io::Error::other("interrupted"))
        });
        assert!(failed.is_err());
        assert_eq!(std::fs::read_to_string(&path).unwrap(), "first");
        assert_eq!(std::fs::read_dir(&dir).unwrap().count(), 1);
        std::fs::remove_dir_all(&dir).unwrap();
    }
}
