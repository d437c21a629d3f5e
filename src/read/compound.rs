//! The compound-file checks: a size check of xls sheets, and a check that
//! no FAT or mini-FAT chain loops, before calamine reads the file.
//!
//! calamine's xls reader builds each sheet as one dense rectangle around
//! its cells, and reserves room for the rectangle a sheet's Dimensions
//! record declares, before we see a cell. Two cells far apart, or a wild
//! Dimensions record, make it ask for tens of gigabytes, and a failed
//! allocation ends the process (no panic to catch). xls content is not
//! compressed, so the cell positions can be read cheaply first: this module
//! finds the `Workbook` stream in the compound file ([MS-CFB] §2.2–2.6),
//! walks each sheet's records ([MS-XLS] §2.1.4) the way calamine does, and
//! refuses a sheet whose cells or declared dimensions span more than
//! [`MAX_CELLS`]. Content it cannot follow is left to calamine, which then
//! reports it.

use super::{group_thousands, Fault, MAX_CELLS};
use crate::cells::CellRange;

const END_OF_CHAIN: u32 = 0xFFFF_FFFE;
const MAX_REGULAR: u32 = 0xFFFF_FFFA;

fn u16_at(b: &[u8], at: usize) -> Option<u16> {
    Some(u16::from_le_bytes(b.get(at..at + 2)?.try_into().ok()?))
}

fn u32_at(b: &[u8], at: usize) -> Option<u32> {
    Some(u32::from_le_bytes(b.get(at..at + 4)?.try_into().ok()?))
}

/// Refuses an xls whose sheets span more than [`MAX_CELLS`].
pub(super) fn check(file: &[u8]) -> Result<(), Fault> {
    // calamine follows sector chains without a bound: a chain that loops
    // back on itself makes it grow a buffer until memory runs out
    // (found by fuzzing: examples/fuzz_stable.rs).
    if let Some(fat) = fat_table(file) {
        if has_loop(&fat) || minifat_table(file, &fat).is_some_and(|m| has_loop(&m)) {
            return Err(Fault::Damaged(None));
        }
    }
    let Some(stream) = workbook_stream(file) else { return Ok(()) };
    for (name, extent, declared) in sheet_extents(&stream) {
        let area = |r: &CellRange| u64::from(r.rows()) * u64::from(r.cols());
        if let Some(e) = extent.filter(|e| area(e) > MAX_CELLS as u64) {
            return Err(Fault::TooLarge { sheet: name, extent: e });
        }
        if declared > MAX_CELLS as u64 {
            return Err(Fault::Sheet {
                sheet: name,
                reason: format!(
                    "its dimension record declares {declared} cells, more than the {} plumb reads from one sheet; the file is damaged, or the sheet must be split",
                    group_thousands(MAX_CELLS as u64)
                ),
                source: None,
            });
        }
    }
    Ok(())
}

/// The bytes of the chain of units from `start`, `len` bytes at most; a
/// loop in the chain or a unit beyond the file gives `None`.
fn chain<'a>(start: u32, unit: &dyn Fn(u32) -> Option<&'a [u8]>, table: &[u32], len: usize) -> Option<Vec<u8>> {
    let mut out = Vec::new();
    let mut id = start;
    let mut steps = 0;
    while id != END_OF_CHAIN && out.len() < len {
        steps += 1;
        if steps > table.len() + 1 {
            return None;
        }
        out.extend_from_slice(unit(id)?);
        id = *table.get(id as usize)?;
    }
    out.truncate(len);
    Some(out)
}

/// The file allocation table ([MS-CFB] §2.3), read as
/// [`workbook_stream`] reads it; `None` where it cannot be followed.
fn fat_table(file: &[u8]) -> Option<Vec<u32>> {
    let size = sector_size(file)?;
    let n_sectors = file.len() / size;
    // DIFAT: 109 entries in the header, then a chain of DIFAT sectors.
    let mut difat: Vec<u32> = (0..109).filter_map(|i| u32_at(file, 76 + 4 * i)).collect();
    let mut next = u32_at(file, 68)?;
    let mut guard = 0;
    while next < MAX_REGULAR {
        guard += 1;
        if guard > n_sectors {
            return None;
        }
        let s = sector_at(file, size, next)?;
        let per = size / 4 - 1;
        difat.extend((0..per).filter_map(|i| u32_at(s, 4 * i)));
        next = u32_at(s, 4 * per)?;
    }
    let mut fat = Vec::new();
    for id in difat.into_iter().filter(|id| *id < MAX_REGULAR) {
        let s = sector_at(file, size, id)?;
        fat.extend((0..size / 4).filter_map(|i| u32_at(s, 4 * i)));
    }
    Some(fat)
}

/// The sector size of a compound file's header: 512 (version 3) or
/// 4096 (version 4) bytes; `None` for anything else.
fn sector_size(file: &[u8]) -> Option<usize> {
    match u16_at(file, 30)? {
        9 => Some(512),
        12 => Some(4096),
        _ => None,
    }
}

/// Sector `id` of a compound file (sector 0 follows the header sector).
fn sector_at(file: &[u8], size: usize, id: u32) -> Option<&[u8]> {
    let start = (id as usize + 1).checked_mul(size)?;
    file.get(start..start.checked_add(size)?)
}

/// The mini FAT ([MS-CFB] §2.4), whose chain the FAT gives.
fn minifat_table(file: &[u8], fat: &[u32]) -> Option<Vec<u32>> {
    let size = sector_size(file)?;
    let sector = |id: u32| sector_at(file, size, id);
    let bytes = chain(u32_at(file, 60)?, &sector, fat, usize::MAX)?;
    Some((0..bytes.len() / 4).filter_map(|i| u32_at(&bytes, 4 * i)).collect())
}

/// Whether some chain of the table returns to a sector it passed: each
/// entry names the next sector, so the table is a functional graph and
/// one pass with three marks finds any cycle. A sound file has none
/// (unused sectors are marked free).
fn has_loop(table: &[u32]) -> bool {
    let n = table.len();
    let mut mark = vec![0u8; n]; // 0 unseen, 1 on the current path, 2 done
    for start in 0..n {
        let mut path = Vec::new();
        let mut id = start;
        while id < n && mark[id] == 0 {
            mark[id] = 1;
            path.push(id);
            id = table[id] as usize;
        }
        if id < n && mark[id] == 1 {
            return true;
        }
        for p in path {
            mark[p] = 2;
        }
    }
    false
}

/// The content of the `Workbook` (or BIFF5 `Book`) stream.
fn workbook_stream(file: &[u8]) -> Option<Vec<u8>> {
    let size = sector_size(file)?;
    let sector = |id: u32| sector_at(file, size, id);
    let fat = fat_table(file)?;
    let dirs = chain(u32_at(file, 48)?, &sector, &fat, usize::MAX)?;
    let entries: Vec<&[u8]> = dirs.chunks_exact(128).collect();
    let root = entries.first()?;
    let named = |want: &str| {
        entries.iter().find(|e| {
            let len = (u16_at(e, 64).unwrap_or(0) as usize).min(64);
            let units: Vec<u16> = (0..len / 2).filter_map(|i| u16_at(e, 2 * i)).take_while(|u| *u != 0).collect();
            String::from_utf16_lossy(&units).eq_ignore_ascii_case(want)
        })
    };
    let entry = named("Workbook").or_else(|| named("Book"))?;
    let (start, size) = (u32_at(entry, 116)?, u32_at(entry, 120)? as usize);
    if size >= 4096 {
        return chain(start, &sector, &fat, size);
    }
    // A small stream lives in 64-byte units of the mini stream, which is
    // the root entry's stream, mapped by the mini FAT.
    let ministream = chain(u32_at(root, 116)?, &sector, &fat, u32_at(root, 120)? as usize)?;
    let minifat_bytes = chain(u32_at(file, 60)?, &sector, &fat, usize::MAX)?;
    let minifat: Vec<u32> = (0..minifat_bytes.len() / 4).filter_map(|i| u32_at(&minifat_bytes, 4 * i)).collect();
    let mini = |id: u32| ministream.get(id as usize * 64..id as usize * 64 + 64);
    chain(start, &mini, &minifat, size)
}

/// Each sheet's name, the rectangle around its cells and the cell count
/// its Dimensions records declare, following calamine's walk: from each
/// BoundSheet8 offset, records up to the sheet's EOF, skipping nested
/// substreams.
fn sheet_extents(stream: &[u8]) -> Vec<(String, Option<CellRange>, u64)> {
    let records = |from: usize| {
        let mut at = from;
        std::iter::from_fn(move || {
            let typ = u16_at(stream, at)?;
            let len = u16_at(stream, at + 2)? as usize;
            let data = stream.get(at + 4..at + 4 + len)?;
            at += 4 + len;
            Some((typ, data))
        })
    };
    let mut sheets = Vec::new();
    for (typ, data) in records(0) {
        match typ {
            0x0085 => {
                let Some(pos) = u32_at(data, 0) else { continue };
                let name = data.get(6..).map(short_string).unwrap_or_default();
                sheets.push((pos as usize, name));
            }
            0x000A => break,
            _ => {}
        }
    }
    let mut out = Vec::new();
    for (pos, name) in sheets {
        let mut extent: Option<CellRange> = None;
        let mut declared = 0u64;
        let mut add = |row: u16, col: u16| extent = Some(CellRange::enclosing(extent, u32::from(row), u32::from(col)));
        let (mut seen_bof, mut depth) = (false, 0usize);
        for (typ, data) in records(pos) {
            if depth > 0 {
                match typ {
                    0x0809 => depth += 1,
                    0x000A => depth -= 1,
                    _ => {}
                }
                continue;
            }
            let cell = || Some((u16_at(data, 0)?, u16_at(data, 2)?));
            match typ {
                0x0809 if seen_bof => depth += 1,
                0x0809 => seen_bof = true,
                0x000A => break,
                0x0200 => declared = declared.max(dimension_cells(data)),
                0x0203 | 0x0204 | 0x00D6 | 0x0205 | 0x027E | 0x00FD | 0x0006 => {
                    if let Some((r, c)) = cell() {
                        add(r, c);
                    }
                }
                0x00BD => {
                    if let (Some((r, c)), Some(last)) = (cell(), data.len().checked_sub(2).and_then(|at| u16_at(data, at))) {
                        add(r, c);
                        add(r, last);
                    }
                }
                _ => {}
            }
        }
        out.push((name, extent, declared));
    }
    out
}

/// The cell count a Dimensions record declares, as calamine reads it
/// (BIFF5 16-bit or BIFF8 32-bit rows, end exclusive).
fn dimension_cells(d: &[u8]) -> u64 {
    let parts = match d.len() {
        10 => (u16_at(d, 0).map(u32::from), u16_at(d, 2).map(u32::from), u16_at(d, 4), u16_at(d, 6)),
        14 | 16 => (u32_at(d, 0), u32_at(d, 4), u16_at(d, 8), u16_at(d, 10)),
        _ => return 0,
    };
    let (Some(rf), Some(rl), Some(cf), Some(cl)) = parts else { return 0 };
    let cf = if cf > 0xFF || cl < cf { 0 } else { cf };
    if rl == 0 || cl == 0 {
        return 1;
    }
    let rows = u64::from(rl - 1).wrapping_sub(u64::from(rf)).wrapping_add(1);
    let cols = u64::from(cl - 1).wrapping_sub(u64::from(cf)).wrapping_add(1);
    rows.saturating_mul(cols)
}

/// A BoundSheet8 name: a byte count, then (BIFF8) a flag for 16-bit
/// characters, then the characters. Best effort: it only names a sheet
/// in a message.
fn short_string(d: &[u8]) -> String {
    let Some(&n) = d.first() else { return String::new() };
    match d.get(1) {
        Some(1) => {
            let units: Vec<u16> = (0..n as usize).filter_map(|i| u16_at(d, 2 + 2 * i)).collect();
            String::from_utf16_lossy(&units)
        }
        _ => d.get(2..2 + n as usize).map(|b| b.iter().map(|&c| char::from(c)).collect()).unwrap_or_default(),
    }
}
