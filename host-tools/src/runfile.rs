//! The compact run file `simulate --bin` writes: the core's probe integers, row by row.
//!
//! Why this and not a columnar format: a run is produced one sample at a time, and a
//! row-major file streams with constant memory (a columnar file must buffer row groups and
//! brings a large dependency); the core's probe read-out is an `i32`, so four bytes per
//! value store it exactly, against about 13 bytes of decimal text in the CSV, which also
//! rounds to 7 figures. The layout (all little-endian; see `docs/run-file.md`):
//!
//! ```text
//! magic  8 bytes  "TWRUN\0\0\x01"   (format version 1 in the last byte)
//! u32             probe count P
//! f64             sample period, s
//! P times:  u16 name length, name (UTF-8), u8 unit length, unit (UTF-8), f64 scale
//! then one row per sample: P × i32 raw values; value = raw × scale (V or A)
//! ```
//!
//! The sample count is not in the header (the run is streamed): it is the body length
//! divided by 4·P.
use std::io::{Read, Write};

/// The first eight bytes of a run file.
pub const MAGIC: &[u8; 8] = b"TWRUN\0\0\x01";

/// One probe column of a run file.
#[derive(Debug, Clone, PartialEq)]
pub struct Column {
    pub name: String,
    pub unit: String,
    /// Volts (amperes) per raw unit.
    pub scale: f64,
}

/// Write the header.
pub fn write_header(w: &mut impl Write, dt: f64, columns: &[Column]) -> std::io::Result<()> {
    w.write_all(MAGIC)?;
    w.write_all(&(columns.len() as u32).to_le_bytes())?;
    w.write_all(&dt.to_le_bytes())?;
    for c in columns {
        let name = &c.name.as_bytes()[..c.name.len().min(u16::MAX as usize)];
        w.write_all(&(name.len() as u16).to_le_bytes())?;
        w.write_all(name)?;
        let unit = &c.unit.as_bytes()[..c.unit.len().min(u8::MAX as usize)];
        w.write_all(&[unit.len() as u8])?;
        w.write_all(unit)?;
        w.write_all(&c.scale.to_le_bytes())?;
    }
    Ok(())
}

/// Write one sample's row.
pub fn write_row(w: &mut impl Write, raw: &[i32]) -> std::io::Result<()> {
    for r in raw {
        w.write_all(&r.to_le_bytes())?;
    }
    Ok(())
}

/// A run file read back: the header and the raw rows.
#[derive(Debug, Clone, PartialEq)]
pub struct Run {
    pub dt: f64,
    pub columns: Vec<Column>,
    /// Per probe, its raw values.
    pub raw: Vec<Vec<i32>>,
}

fn bad(what: &str) -> std::io::Error {
    std::io::Error::new(std::io::ErrorKind::InvalidData, format!("not a tidewire run file: {what}"))
}

fn take<const N: usize>(r: &mut impl Read) -> std::io::Result<[u8; N]> {
    let mut b = [0u8; N];
    r.read_exact(&mut b).map_err(|_| bad("the header is cut short"))?;
    Ok(b)
}

fn text(r: &mut impl Read, len: usize) -> std::io::Result<String> {
    let mut b = vec![0u8; len];
    r.read_exact(&mut b).map_err(|_| bad("the header is cut short"))?;
    String::from_utf8(b).map_err(|_| bad("a name is not UTF-8"))
}

/// Read a whole run file (for tests and small runs; the format itself streams).
pub fn read(r: &mut impl Read) -> std::io::Result<Run> {
    if &take::<8>(r)? != MAGIC {
        return Err(bad("wrong magic or version"));
    }
    let p = u32::from_le_bytes(take(r)?) as usize;
    // A header is at least 11 bytes per probe; refuse counts no real plant has before
    // allocating for them.
    if p > 1 << 16 {
        return Err(bad("more than 65536 probes"));
    }
    let dt = f64::from_le_bytes(take(r)?);
    let mut columns = Vec::with_capacity(p);
    for _ in 0..p {
        let nl = u16::from_le_bytes(take(r)?) as usize;
        let name = text(r, nl)?;
        let ul = take::<1>(r)?[0] as usize;
        let unit = text(r, ul)?;
        let scale = f64::from_le_bytes(take(r)?);
        columns.push(Column { name, unit, scale });
    }
    let mut body = vec![];
    r.read_to_end(&mut body)?;
    let row = 4 * p.max(1);
    if body.len() % row != 0 {
        return Err(bad("the body is not a whole number of rows"));
    }
    let mut raw = vec![Vec::with_capacity(body.len() / row); p];
    for chunk in body.chunks_exact(row) {
        for (k, v) in chunk.chunks_exact(4).enumerate() {
            raw[k].push(i32::from_le_bytes([v[0], v[1], v[2], v[3]]));
        }
    }
    Ok(Run { dt, columns, raw })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_run_file_reads_back_exactly_and_refuses_garbage() {
        let cols = vec![
            Column { name: "far end".into(), unit: "V".into(), scale: 2.5e-7 },
            Column { name: "feed µ".into(), unit: "A".into(), scale: 1e-9 },
        ];
        let mut buf = vec![];
        write_header(&mut buf, 1e-8, &cols).unwrap();
        for k in 0..5 {
            write_row(&mut buf, &[k, i32::MIN + k]).unwrap();
        }
        let run = read(&mut buf.as_slice()).unwrap();
        assert_eq!(run.dt, 1e-8);
        assert_eq!(run.columns, cols);
        assert_eq!(run.raw[0], vec![0, 1, 2, 3, 4]);
        assert_eq!(run.raw[1][4], i32::MIN + 4);
        assert!(read(&mut &buf[..buf.len() - 1]).is_err(), "a cut row is refused");
        assert!(read(&mut &b"TWRUN\0\0\x02rest"[..]).is_err(), "another version is refused");
    }
}
