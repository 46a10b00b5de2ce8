//! A zip archive of stored (uncompressed) files, for the page's download of a simulated
//! series: local headers, the central directory and its end record, CRC-32 of each file.
//!
//! Written to PKWARE's APPNOTE.TXT (the .ZIP File Format Specification, 6.3.x: sections 4.3.7
//! local file header, 4.3.12 central directory header, 4.3.16 end of central directory, 4.4.4
//! bit 11 for UTF-8 names), without zip64: an archive over 4 GiB or 65 535 files is refused.
//! The time stamp is the format's earliest (1980-01-01 00:00), so the same files give the same
//! bytes.

/// CRC-32 of the zip format (ISO-HDLC: reflected polynomial 0xEDB88320, initial and final
/// complement; APPNOTE 4.4.7).
#[must_use]
pub fn crc32(bytes: &[u8]) -> u32 {
    let mut table = [0u32; 256];
    for (n, slot) in (0u32..).zip(table.iter_mut()) {
        let mut c = n;
        for _ in 0..8 {
            c = if c & 1 == 1 {
                0xEDB8_8320 ^ (c >> 1)
            } else {
                c >> 1
            };
        }
        *slot = c;
    }
    let mut crc = !0u32;
    for &b in bytes {
        let i = usize::from(u8::try_from((crc ^ u32::from(b)) & 0xff).unwrap_or(0));
        crc = table.get(i).copied().unwrap_or(0) ^ (crc >> 8);
    }
    !crc
}

/// DOS date of 1980-01-01 (APPNOTE 4.4.6: day 1, month 1, year 0 from 1980).
const DOS_DATE: u16 = (1 << 5) | 1;
/// "Version needed to extract": 1.0, enough for stored files.
const VERSION: u16 = 10;
/// General purpose flag bit 11: names are UTF-8.
const UTF8_NAMES: u16 = 1 << 11;

fn u16_le(out: &mut Vec<u8>, v: u16) {
    out.extend_from_slice(&v.to_le_bytes());
}

fn u32_le(out: &mut Vec<u8>, v: u32) {
    out.extend_from_slice(&v.to_le_bytes());
}

/// The archive of `entries` (name, bytes), stored in the order given.
///
/// # Errors
/// A name longer than 65 535 bytes, more than 65 535 files, or an archive over 4 GiB.
pub fn stored(entries: &[(String, &[u8])]) -> Result<Vec<u8>, String> {
    let too_big = || "the series is too large for a zip file without zip64 (4 GiB)".to_string();
    let count = u16::try_from(entries.len()).map_err(|_| "more than 65 535 files".to_string())?;
    let mut out = Vec::new();
    let mut central = Vec::new();
    for (name, bytes) in entries {
        let name_len = u16::try_from(name.len()).map_err(|_| format!("name too long: {name}"))?;
        let size = u32::try_from(bytes.len()).map_err(|_| too_big())?;
        let offset = u32::try_from(out.len()).map_err(|_| too_big())?;
        let crc = crc32(bytes);
        // Local file header (4.3.7).
        u32_le(&mut out, 0x0403_4b50);
        u16_le(&mut out, VERSION);
        u16_le(&mut out, UTF8_NAMES);
        u16_le(&mut out, 0); // stored
        u16_le(&mut out, 0); // time 00:00
        u16_le(&mut out, DOS_DATE);
        u32_le(&mut out, crc);
        u32_le(&mut out, size);
        u32_le(&mut out, size);
        u16_le(&mut out, name_len);
        u16_le(&mut out, 0); // no extra field
        out.extend_from_slice(name.as_bytes());
        out.extend_from_slice(bytes);
        // Central directory header (4.3.12).
        u32_le(&mut central, 0x0201_4b50);
        u16_le(&mut central, VERSION); // made by: MS-DOS, 1.0
        u16_le(&mut central, VERSION);
        u16_le(&mut central, UTF8_NAMES);
        u16_le(&mut central, 0);
        u16_le(&mut central, 0);
        u16_le(&mut central, DOS_DATE);
        u32_le(&mut central, crc);
        u32_le(&mut central, size);
        u32_le(&mut central, size);
        u16_le(&mut central, name_len);
        u16_le(&mut central, 0); // extra
        u16_le(&mut central, 0); // comment
        u16_le(&mut central, 0); // disk
        u16_le(&mut central, 0); // internal attributes
        u32_le(&mut central, 0); // external attributes
        u32_le(&mut central, offset);
        central.extend_from_slice(name.as_bytes());
    }
    let central_offset = u32::try_from(out.len()).map_err(|_| too_big())?;
    let central_size = u32::try_from(central.len()).map_err(|_| too_big())?;
    out.extend_from_slice(&central);
    // End of central directory (4.3.16).
    u32_le(&mut out, 0x0605_4b50);
    u16_le(&mut out, 0);
    u16_le(&mut out, 0);
    u16_le(&mut out, count);
    u16_le(&mut out, count);
    u32_le(&mut out, central_size);
    u32_le(&mut out, central_offset);
    u16_le(&mut out, 0);
    u32::try_from(out.len()).map_err(|_| too_big())?;
    Ok(out)
}

#[cfg(test)]
pub(crate) mod tests {
    #![allow(clippy::unwrap_used, clippy::indexing_slicing)] // test code

    use super::*;

    fn u16_at(b: &[u8], i: usize) -> usize {
        usize::from(u16::from_le_bytes([b[i], b[i + 1]]))
    }
    fn u32_at(b: &[u8], i: usize) -> u32 {
        u32::from_le_bytes([b[i], b[i + 1], b[i + 2], b[i + 3]])
    }

    /// The names in the central directory, read back from the end record (a reader's path).
    pub(crate) fn names(z: &[u8]) -> Vec<String> {
        let end = z.len() - 22;
        assert_eq!(u32_at(z, end), 0x0605_4b50);
        let count = u16_at(z, end + 10);
        let mut at = u32_at(z, end + 16) as usize;
        let mut out = Vec::new();
        for _ in 0..count {
            assert_eq!(u32_at(z, at), 0x0201_4b50);
            let n = u16_at(z, at + 28);
            let local = u32_at(z, at + 42) as usize;
            assert_eq!(u32_at(z, local), 0x0403_4b50);
            out.push(String::from_utf8(z[at + 46..at + 46 + n].to_vec()).unwrap());
            at += 46 + n;
        }
        out
    }

    #[test]
    fn crc32_matches_the_catalogues_check_value() {
        // CRC-32/ISO-HDLC check value of "123456789": 0xCBF43926 (Greg Cook's CRC catalogue;
        // also Python's zlib.crc32(b"123456789")).
        assert_eq!(crc32(b"123456789"), 0xCBF4_3926);
        assert_eq!(crc32(b""), 0);
    }

    #[test]
    fn entries_are_stored_whole_with_their_crc_and_read_back_by_name() {
        let a = b"P5\n2 1\n255\nab".to_vec();
        let entries = vec![
            ("s/manifest.json".to_string(), &b"{}"[..]),
            ("s/é.pgm".to_string(), &a[..]),
        ];
        let z = stored(&entries).unwrap();
        assert_eq!(names(&z), ["s/manifest.json", "s/é.pgm"]);
        // The second local header: its CRC and size, then the bytes unchanged.
        let second = 30 + "s/manifest.json".len() + 2;
        assert_eq!(u32_at(&z, second + 14), crc32(&a));
        assert_eq!(u32_at(&z, second + 18) as usize, a.len());
        let data = second + 30 + "s/é.pgm".len();
        assert_eq!(&z[data..data + a.len()], &a[..]);
        assert_eq!(
            stored(&entries).unwrap(),
            z,
            "the same files, the same bytes"
        );
    }

    #[test]
    fn pythons_zipfile_reads_it_and_finds_every_crc_right() {
        // An outside reader: Python's zipfile (standard library) lists the names and, with
        // testzip(), re-reads every member against its CRC (python3 is on every machine this
        // project builds on: scripts/setup needs it).
        let entries = vec![
            ("d/manifest.json".to_string(), &b"{\"version\": 1}"[..]),
            ("d/f1a.pgm".to_string(), &[7u8; 1000][..]),
        ];
        let z = stored(&entries).unwrap();
        let path =
            std::env::temp_dir().join(format!("noise-budget-zip-{}.zip", std::process::id()));
        std::fs::write(&path, &z).unwrap();
        let out = std::process::Command::new("python3")
            .args([
                "-c",
                "import sys, zipfile; z = zipfile.ZipFile(sys.argv[1]); \
                 print(z.testzip(), z.namelist(), [i.file_size for i in z.infolist()])",
            ])
            .arg(&path)
            .output()
            .unwrap();
        let _ = std::fs::remove_file(&path);
        let text = String::from_utf8_lossy(&out.stdout);
        assert!(
            out.status.success(),
            "{}",
            String::from_utf8_lossy(&out.stderr)
        );
        assert_eq!(
            text.trim(),
            "None ['d/manifest.json', 'd/f1a.pgm'] [14, 1000]"
        );
    }
}
