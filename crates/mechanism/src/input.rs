//! The one reader of input files used by every stoik loader (mechanism, thermo, scenario,
//! rate data, tables): regular files only, at most [`MAX_INPUT_BYTES`], UTF-8 with the first
//! bad byte located.
//!
//! A FIFO, a device (`/dev/zero`, `/dev/urandom`), a folder or a socket is refused from its
//! metadata, before it is opened, so a pipe with no writer cannot hang the reader and an
//! endless device cannot exhaust memory. Standard input, named `/dev/stdin`, is the one
//! exception: it is read (through the same size cap) whatever it is connected to.

use crate::{Diagnostic, Diagnostics, LoadError, SourceLocation};
use std::io::Read;
use std::path::Path;

/// The largest input file stoik reads, in bytes (64 MiB). Larger files are refused with
/// [`InputError::TooLarge`]; the bundled files are below 1 MiB.
pub const MAX_INPUT_BYTES: u64 = 64 * 1024 * 1024;

/// Why an input file could not be read as text.
#[derive(Debug, Clone, PartialEq, Eq, thiserror::Error)]
pub enum InputError {
    /// The operating system refused (missing file, no permission, symlink loop, ...).
    #[error("cannot read file: {reason}")]
    Io {
        /// The operating system's message.
        reason: String,
    },
    /// The path names something other than a regular file; it was not opened.
    #[error("cannot read file: it is {what}, not a regular file")]
    NotRegular {
        /// What the path names, e.g. `"a FIFO (named pipe)"`, `"a folder"`.
        what: &'static str,
    },
    /// The file is larger than [`MAX_INPUT_BYTES`].
    #[error("cannot read file: it is larger than the input limit of {limit} bytes ({} MiB)", limit / (1024 * 1024))]
    TooLarge {
        /// The limit, in bytes.
        limit: u64,
    },
    /// The file is not UTF-8; the position of the first bad byte.
    #[error("{line}:{column}: invalid UTF-8 (byte 0x{byte:02X}); stoik files are UTF-8 text")]
    InvalidUtf8 {
        /// 1-based line of the first bad byte.
        line: usize,
        /// 1-based column (in characters) of the first bad byte.
        column: usize,
        /// The first bad byte.
        byte: u8,
    },
}

impl InputError {
    /// The error as a loader reports it for the file `label`: invalid UTF-8 as a located
    /// diagnostic (`label:line:column: error: ...`), anything else as [`LoadError::Io`].
    pub fn into_load_error(self, label: &str) -> LoadError {
        match self {
            InputError::InvalidUtf8 { line, column, byte } => {
                let mut diagnostics = Diagnostics::default();
                diagnostics.push(
                    Diagnostic::error(
                        label,
                        Some(SourceLocation { line, column }),
                        format!("invalid UTF-8 (byte 0x{byte:02X})"),
                    )
                    .with_help("stoik files are UTF-8 text; re-save the file as UTF-8"),
                );
                LoadError::Invalid { diagnostics }
            }
            other => LoadError::Io {
                file: label.to_string(),
                reason: other
                    .to_string()
                    .trim_start_matches("cannot read file: ")
                    .to_string(),
            },
        }
    }
}

/// Whether `path` names standard input (`/dev/stdin`, `/dev/fd/0`, `/proc/self/fd/0`).
fn is_stdin(path: &Path) -> bool {
    ["/dev/stdin", "/dev/fd/0", "/proc/self/fd/0"]
        .iter()
        .any(|p| path == Path::new(p))
}

/// What a non-regular file type is, in words.
fn describe(file_type: std::fs::FileType) -> &'static str {
    #[cfg(unix)]
    {
        use std::os::unix::fs::FileTypeExt;
        if file_type.is_fifo() {
            return "a FIFO (named pipe)";
        }
        if file_type.is_char_device() {
            return "a character device";
        }
        if file_type.is_block_device() {
            return "a block device";
        }
        if file_type.is_socket() {
            return "a socket";
        }
    }
    if file_type.is_dir() {
        "a folder"
    } else {
        "not a regular file"
    }
}

/// Reads the input file at `path` as UTF-8 text.
///
/// Errors: [`InputError::NotRegular`] for anything but a regular file (except standard input,
/// see the module doc), [`InputError::TooLarge`] above [`MAX_INPUT_BYTES`],
/// [`InputError::InvalidUtf8`] with the line and column of the first bad byte,
/// [`InputError::Io`] for the operating system's refusals.
pub fn read_input_text(path: &Path) -> Result<String, InputError> {
    let io = |e: std::io::Error| InputError::Io {
        reason: e.to_string(),
    };
    if !is_stdin(path) {
        let metadata = std::fs::metadata(path).map_err(io)?;
        if !metadata.is_file() {
            return Err(InputError::NotRegular {
                what: describe(metadata.file_type()),
            });
        }
        if metadata.len() > MAX_INPUT_BYTES {
            return Err(InputError::TooLarge {
                limit: MAX_INPUT_BYTES,
            });
        }
    }
    let file = std::fs::File::open(path).map_err(io)?;
    let mut bytes = Vec::new();
    file.take(MAX_INPUT_BYTES + 1)
        .read_to_end(&mut bytes)
        .map_err(io)?;
    if bytes.len() as u64 > MAX_INPUT_BYTES {
        return Err(InputError::TooLarge {
            limit: MAX_INPUT_BYTES,
        });
    }
    text_from_bytes(bytes)
}

/// UTF-8 text from `bytes`, or the position of the first bad byte.
///
/// Errors: [`InputError::InvalidUtf8`].
pub fn text_from_bytes(bytes: Vec<u8>) -> Result<String, InputError> {
    String::from_utf8(bytes).map_err(|e| {
        let good = e.utf8_error().valid_up_to();
        let bytes = e.as_bytes();
        // The prefix up to the bad byte is valid UTF-8, so it splits into characters.
        let prefix = String::from_utf8_lossy(&bytes[..good]);
        let line = prefix.matches('\n').count() + 1;
        let line_start = prefix.rfind('\n').map_or(0, |i| i + 1);
        let column = prefix[line_start..].chars().count() + 1;
        InputError::InvalidUtf8 {
            line,
            column,
            byte: bytes[good],
        }
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A scratch folder under the system's temporary folder, removed by the caller.
    fn scratch(name: &str) -> std::path::PathBuf {
        let dir = std::env::temp_dir().join(format!("stoik-input-{name}-{}", std::process::id()));
        std::fs::create_dir_all(&dir).expect("scratch folder");
        dir
    }

    #[test]
    fn first_bad_byte_is_located_by_line_and_character_column() {
        // "Ω" is 2 bytes but 1 character (Unicode, UTF-8 encoding form, table 3-6): the bad
        // 0xFF after "aΩb" on line 3 is the 4th character of that line.
        let bytes = b"x = 1\n# c\na\xce\xa9b\xffz\n".to_vec();
        assert_eq!(
            text_from_bytes(bytes),
            Err(InputError::InvalidUtf8 {
                line: 3,
                column: 4,
                byte: 0xFF
            })
        );
        // A lone continuation byte (0x80) at the very start: line 1, column 1.
        assert_eq!(
            text_from_bytes(vec![0x80]),
            Err(InputError::InvalidUtf8 {
                line: 1,
                column: 1,
                byte: 0x80
            })
        );
        // An overlong encoding of '/' (0xC0 0xAF) is invalid UTF-8 (RFC 3629, section 3).
        assert!(matches!(
            text_from_bytes(b"ab\xc0\xaf".to_vec()),
            Err(InputError::InvalidUtf8 { column: 3, .. })
        ));
    }

    #[test]
    fn invalid_utf8_becomes_a_located_diagnostic() {
        let e = text_from_bytes(b"a\n\xffb".to_vec())
            .expect_err("invalid")
            .into_load_error("m.toml");
        assert!(e
            .to_string()
            .starts_with("m.toml:2:1: error: invalid UTF-8"));
    }

    #[test]
    fn special_files_are_refused_without_being_read() {
        // A folder.
        let dir = scratch("special");
        assert_eq!(
            read_input_text(&dir),
            Err(InputError::NotRegular { what: "a folder" })
        );
        // An endless device: refused at once instead of read until memory runs out.
        #[cfg(unix)]
        assert_eq!(
            read_input_text(Path::new("/dev/zero")),
            Err(InputError::NotRegular {
                what: "a character device"
            })
        );
        // A FIFO with no writer: opening it for reading would block forever.
        #[cfg(unix)]
        {
            let fifo = dir.join("pipe");
            let c = std::ffi::CString::new(fifo.to_string_lossy().as_bytes()).expect("path");
            // SAFETY: `c` is a valid NUL-terminated path.
            let made = unsafe { libc_mkfifo(c.as_ptr(), 0o600) };
            assert_eq!(made, 0, "mkfifo");
            assert_eq!(
                read_input_text(&fifo),
                Err(InputError::NotRegular {
                    what: "a FIFO (named pipe)"
                })
            );
        }
        // A regular file reads back as written.
        let file = dir.join("ok.toml");
        std::fs::write(&file, "x = 1\n").expect("write");
        assert_eq!(read_input_text(&file).as_deref(), Ok("x = 1\n"));
        std::fs::remove_dir_all(&dir).expect("cleanup");
    }

    #[test]
    fn files_above_the_limit_are_refused() {
        let dir = scratch("large");
        let file = dir.join("big.toml");
        let f = std::fs::File::create(&file).expect("create");
        // A sparse file one byte over the limit: its length is what is checked.
        f.set_len(MAX_INPUT_BYTES + 1).expect("set_len");
        assert_eq!(
            read_input_text(&file),
            Err(InputError::TooLarge {
                limit: 64 * 1024 * 1024
            })
        );
        std::fs::remove_dir_all(&dir).expect("cleanup");
    }

    #[cfg(unix)]
    extern "C" {
        #[link_name = "mkfifo"]
        fn libc_mkfifo(path: *const std::ffi::c_char, mode: u32) -> i32;
    }
}
