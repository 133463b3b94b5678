//! Bytes in, text out: the limits every input file meets before it is parsed.
//!
//! Every file the tool reads (catalog, requirement, board design, included requirement,
//! bench CSV) comes through [`read_text`], so one size cap holds everywhere: a file
//! larger than [`MAX_INPUT_BYTES`] is refused, located, before it is read into memory
//! (and an endless source like `/dev/zero` is read no further than the cap). Text that is
//! not UTF-8 is refused at the line and column of its first bad byte.

use std::io::Read;
use std::path::Path;

use super::{InputError, Position, Problem};

/// The largest input file, in bytes. A catalog of 2,500 classes is about 1.4 MB; ten
/// times that still fits. Anything larger is not a file a person wrote for this tool.
pub const MAX_INPUT_BYTES: u64 = 16 * 1024 * 1024;

/// Why a file could not be read as text.
#[derive(Debug)]
pub enum ReadError {
    /// The operating system refused (missing file, permissions, a directory).
    Io(std::io::Error),
    /// The file was read but is not acceptable text (too large, not UTF-8).
    Input(InputError),
}

/// Read `path` as UTF-8 text of at most [`MAX_INPUT_BYTES`]; `name` is how messages
/// name the file.
pub fn read_text(path: &Path, name: &str) -> Result<String, ReadError> {
    let file = std::fs::File::open(path).map_err(ReadError::Io)?;
    let meta = file.metadata().map_err(ReadError::Io)?;
    if meta.is_dir() {
        return Err(ReadError::Io(std::io::Error::new(
            std::io::ErrorKind::InvalidInput,
            "it is a directory; expected a file",
        )));
    }
    if meta.is_file() && meta.len() > MAX_INPUT_BYTES {
        return Err(ReadError::Input(too_large(name)));
    }
    // Devices and pipes report no length: read one byte past the cap, no further.
    let mut bytes = Vec::new();
    file.take(MAX_INPUT_BYTES + 1)
        .read_to_end(&mut bytes)
        .map_err(ReadError::Io)?;
    if bytes.len() as u64 > MAX_INPUT_BYTES {
        return Err(ReadError::Input(too_large(name)));
    }
    text_of(name, bytes).map_err(ReadError::Input)
}

fn too_large(name: &str) -> InputError {
    InputError {
        file: name.to_string(),
        position: Position::START,
        problem: Box::new(Problem::TooLarge {
            limit: MAX_INPUT_BYTES,
        }),
    }
}

/// `bytes` as text, or an error at the line and column of the first byte that is not
/// UTF-8 (columns count characters, from 1).
pub fn text_of(name: &str, bytes: Vec<u8>) -> Result<String, InputError> {
    match String::from_utf8(bytes) {
        Ok(text) => Ok(text),
        Err(e) => {
            let bytes = e.as_bytes();
            let at = e.utf8_error().valid_up_to();
            // Everything before `at` is valid UTF-8.
            let good = std::str::from_utf8(&bytes[..at]).unwrap_or("");
            let line_start = good.rfind('\n').map_or(0, |i| i + 1);
            let position = Position {
                line: good.matches('\n').count() + 1,
                col: good[line_start..].chars().count() + 1,
            };
            Err(InputError {
                file: name.to_string(),
                position,
                problem: Box::new(Problem::NotUtf8 { byte: bytes[at] }),
            })
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn first_bad_byte_is_located() {
        let bytes = b"name: ok\nid: caf\xe9-x\n".to_vec();
        let e = text_of("c.yaml", bytes).unwrap_err();
        assert_eq!(e.position, Position { line: 2, col: 8 });
        let msg = e.to_string();
        assert!(msg.starts_with("c.yaml:2:8: "), "{msg}");
        assert!(msg.contains("0xE9"), "{msg}");
        // Columns count characters, not bytes.
        let e = text_of("c.yaml", b"\xce\xa9: \xff".to_vec()).unwrap_err();
        assert_eq!(e.position, Position { line: 1, col: 4 });
        let e = text_of("c.yaml", b"\xc3\xa9\xc3(".to_vec()).unwrap_err();
        assert_eq!(e.position, Position { line: 1, col: 2 });
    }

    #[test]
    fn endless_and_huge_inputs_are_refused_at_the_cap() {
        #[cfg(unix)]
        {
            let e = read_text(Path::new("/dev/zero"), "/dev/zero").unwrap_err();
            match e {
                ReadError::Input(e) => {
                    assert!(matches!(*e.problem, Problem::TooLarge { .. }));
                    assert!(e.to_string().contains("16 MiB"), "{e}");
                }
                ReadError::Io(e) => panic!("{e}"),
            }
        }
        let dir = tempfile::tempdir().unwrap();
        let big = dir.path().join("big.yaml");
        let f = std::fs::File::create(&big).unwrap();
        f.set_len(MAX_INPUT_BYTES + 1).unwrap();
        assert!(matches!(
            read_text(&big, "big.yaml"),
            Err(ReadError::Input(_))
        ));
        assert!(matches!(
            read_text(dir.path(), "dir"),
            Err(ReadError::Io(_))
        ));
    }
}
