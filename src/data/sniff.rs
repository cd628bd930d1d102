//! Recognising files that are not CSV text (compressed, binary, UTF-16), so
//! the user learns what the file is instead of reading a UTF-8 complaint.

use crate::{Error, Result};

/// Bytes inspected for a zero byte (a sign of binary data).
const BINARY_PROBE: usize = 64 * 1024;

/// Leading bytes of formats that are often given by mistake, with what to do.
const SIGNATURES: [(&[u8], &str); 10] = [
    (
        b"\x1f\x8b",
        "is gzip-compressed; unpack it first (e.g. `gunzip FILE.csv.gz`)",
    ),
    (
        b"\xfd7zXZ\x00",
        "is xz-compressed; unpack it first (e.g. `unxz FILE.csv.xz`)",
    ),
    (
        b"\x28\xb5\x2f\xfd",
        "is zstd-compressed; unpack it first (e.g. `unzstd FILE.csv.zst`)",
    ),
    (
        b"PK\x03\x04",
        "is a ZIP archive (or an .xlsx workbook); extract the CSV file, or save the sheet as CSV",
    ),
    (
        b"\xd0\xcf\x11\xe0\xa1\xb1\x1a\xe1",
        "is an old Excel workbook (.xls); save the sheet as CSV (UTF-8)",
    ),
    (b"\x89PNG\r\n\x1a\n", "is a PNG image, not a CSV table"),
    (b"\xff\xd8\xff", "is a JPEG image, not a CSV table"),
    (b"%PDF-", "is a PDF document, not a CSV table"),
    (
        b"\xff\xfe",
        "is UTF-16 text (little-endian); save it as UTF-8 CSV",
    ),
    (
        b"\xfe\xff",
        "is UTF-16 text (big-endian); save it as UTF-8 CSV",
    ),
];

/// Refuses bytes that are clearly not a CSV text file, naming what they look like.
pub(crate) fn check_looks_like_text(file: &str, bytes: &[u8]) -> Result<()> {
    for (signature, what) in SIGNATURES {
        if bytes.starts_with(signature) {
            return Err(Error::input(format!("{file}: the file {what}")));
        }
    }
    if is_bzip2(bytes) {
        return Err(Error::input(format!(
            "{file}: the file is bzip2-compressed; unpack it first (e.g. `bunzip2 FILE.csv.bz2`)"
        )));
    }
    let probe = &bytes[..bytes.len().min(BINARY_PROBE)];
    if let Some(offset) = probe.iter().position(|&b| b == 0) {
        let line = 1 + probe[..offset].iter().filter(|&&b| b == b'\n').count();
        return Err(Error::input(format!(
            "{file}: line {line} holds a zero byte (byte {offset} of the file): this is binary \
             data, not CSV text; give a text file with a header row"
        )));
    }
    Ok(())
}

/// `BZh` + block size digit + the first block's magic: precise enough that a
/// header starting with "BZh" is not mistaken for it.
fn is_bzip2(bytes: &[u8]) -> bool {
    bytes.len() >= 10
        && bytes.starts_with(b"BZh")
        && (b'1'..=b'9').contains(&bytes[3])
        && &bytes[4..10] == b"1AY&SY"
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn compressed_and_binary_files_are_named() {
        let cases: [(&[u8], &str); 5] = [
            (b"\x1f\x8b\x08\x00rest", "gzip"),
            (b"PK\x03\x04rest", "ZIP"),
            (b"BZh91AY&SYrest", "bzip2"),
            (b"\xff\xfex\x00,\x00", "UTF-16"),
            (b"a,b\n1,\x002\n", "line 2 holds a zero byte"),
        ];
        for (bytes, expected) in cases {
            let message = check_looks_like_text("f.csv", bytes)
                .err()
                .map(|e| e.to_string())
                .unwrap_or_default();
            assert!(message.contains(expected), "{expected}: {message}");
        }
        assert!(check_looks_like_text("f.csv", b"BZh,x\n1,2\n").is_ok());
        assert!(check_looks_like_text("f.csv", b"a,b\n1,2\n").is_ok());
    }
}
