//! A structural check of .xls files (an OLE compound file holding a BIFF
//! workbook stream), run before the workbook library sees the bytes.
//!
//! The library indexes many parts of an .xls file without checking them
//! first, so a damaged or hostile file can make it read past the end of a
//! buffer (a panic, which aborts in wasm), follow a sector chain for ever,
//! or size a grid from a number in the file (an allocation of many
//! gigabytes). This module walks the file the way the library reads it,
//! container first and then every record the library looks at, and refuses
//! the file with a message at the first place where the library would fail
//! in one of those ways. Where the library would return an error of its own,
//! the walk stops and lets it.
//!
//! Container layout as published in [MS-CFB], "Compound File Binary File
//! Format" (Microsoft Open Specifications): §2.2 header, §2.3 FAT, §2.4
//! mini FAT, §2.5 DIFAT, §2.6 directory entries. Records as in [MS-XLS],
//! the published .xls format (Microsoft Open Specifications): §2.1.4 records
//! and CONTINUE, §2.4 the records named below, §2.5.198 formula tokens.

const END_OF_CHAIN: u32 = 0xFFFF_FFFE;
/// DIFAT entries at or above this are not FAT sector numbers.
const DIFAT_SECTOR: u32 = 0xFFFF_FFFC;
/// Sector numbers at or above this end the DIFAT chain.
const RESERVED: u32 = 0xFFFF_FFFA;
const SIGNATURE: [u8; 8] = [0xD0, 0xCF, 0x11, 0xE0, 0xA1, 0xB1, 0x1A, 0xE1];

/// Rows and columns an .xls sheet can have ([MS-XLS] §2.5.52 Col is at most
/// 0xFF, §2.4.90 Dimensions allows up to 0x10000 rows).
const MAX_ROWS: u64 = 0x1_0000;
const MAX_COLUMNS: u64 = 0x100;
/// The most text the library may copy out of the shared-string table into
/// the cells of all sheets together, counted at 4 bytes a stored byte (the
/// widest a stored byte can decode to).
const MAX_SHARED_TEXT: u64 = 1 << 30;
/// The most work (bytes moved, as bounded by `formula_work`) the library's
/// formula printer may do on one formula, and on all formulas together. The
/// longest formula a spreadsheet program writes (8192 characters) stays far
/// below; a crafted one of 48 KB can keep the printer busy for minutes.
const MAX_FORMULA_WORK: u64 = 1 << 31;
const MAX_ALL_FORMULA_WORK: u64 = 1 << 35;

fn u16_at(b: &[u8], i: usize) -> Option<u16> {
    b.get(i..i.checked_add(2)?).map(|x| u16::from_le_bytes([x[0], x[1]]))
}

fn u32_at(b: &[u8], i: usize) -> Option<u32> {
    b.get(i..i.checked_add(4)?).map(|x| u32::from_le_bytes([x[0], x[1], x[2], x[3]]))
}

fn u64_at(b: &[u8], i: usize) -> Option<u64> {
    Some(u32_at(b, i)? as u64 | (u32_at(b, i + 4)? as u64) << 32)
}

fn u32s(b: &[u8]) -> impl Iterator<Item = u32> + '_ {
    b.chunks_exact(4).map(|x| u32::from_le_bytes([x[0], x[1], x[2], x[3]]))
}

fn plural(n: u64, one: &str) -> String {
    format!("{n} {one}{}", if n == 1 { "" } else { "s" })
}

fn damaged(what: impl std::fmt::Display) -> String {
    format!("the .xls file is damaged: {what}")
}

/// Checks the file, and that its sheets hold no more than `max_cells`
/// cells in all; `Err` says what is wrong in plain words.
pub fn check(bytes: &[u8], max_cells: usize) -> Result<(), String> {
    match workbook_stream(bytes)? {
        Some(stream) => check_workbook(&stream, max_cells as u64),
        None => Ok(()),
    }
}

// ---------------------------------------------------------------------------
// The container

/// Equal-sized blocks: the file's sectors after the header, or the
/// 64-byte blocks of the small-block stream. Only whole blocks count.
struct Blocks<'a> {
    bytes: &'a [u8],
    offset: usize,
    size: usize,
    count: usize,
}

impl<'a> Blocks<'a> {
    fn get(&self, id: u32, what: &str) -> Result<&'a [u8], String> {
        let i = id as usize;
        if i >= self.count {
            return Err(damaged(format_args!("the {what} names block {id}, past the end of the file")));
        }
        let start = self.offset + i * self.size;
        Ok(&self.bytes[start..start + self.size])
    }

    /// Reads a chain of blocks as the library does: block by block until
    /// the end-of-chain mark or until `len` bytes are read, taking the next
    /// block's number from `table`. Refuses a block outside the file, a
    /// number past the end of `table` and a chain that loops.
    fn chain(&self, start: u32, table: &[u32], len: u64, what: &str) -> Result<Vec<u8>, String> {
        let mut out = Vec::new();
        let mut id = start;
        let mut steps = 0usize;
        while id != END_OF_CHAIN {
            steps += 1;
            if steps > self.count.min(table.len()) + 1 {
                return Err(damaged(format_args!("the {what} loops back on itself")));
            }
            let block = self.get(id, what)?;
            let take = (len - out.len() as u64).min(block.len() as u64) as usize;
            out.extend_from_slice(&block[..take]);
            if out.len() as u64 >= len {
                break;
            }
            id = *table
                .get(id as usize)
                .ok_or_else(|| damaged(format_args!("the {what} leaves its allocation table")))?;
        }
        Ok(out)
    }
}

/// One 128-byte directory entry, as the library reads it.
struct Entry {
    name: String,
    start: u32,
    len: u64,
}

/// Checks the container as the library loads it (header, allocation
/// tables, directory, small-block stream) and returns the workbook stream
/// it will read: the first entry named "Workbook", else "Book" (any case).
/// `None`: there is no such stream, and the library says so itself.
fn workbook_stream(bytes: &[u8]) -> Result<Option<Vec<u8>>, String> {
    if bytes.len() < 512 {
        return Err("the file is shorter than its header".into());
    }
    if bytes[..8] != SIGNATURE {
        return Err("the file starts like an .xls file, but its header is not one".into());
    }
    let version = u16_at(bytes, 0x1A).unwrap_or(0);
    let shift = u16_at(bytes, 0x1E).unwrap_or(0);
    if shift != 9 && shift != 12 {
        return Err(damaged(format_args!("the header gives an impossible sector size (2^{shift})")));
    }
    if u16_at(bytes, 0x20) != Some(6) {
        return Err(damaged("the header gives an impossible small-block size"));
    }
    let size = 1usize << shift;
    if bytes.len() < size {
        return Err("the file is shorter than its header".into());
    }
    let sectors = Blocks { bytes, offset: size, size, count: bytes.len() / size - 1 };
    let n_fat = u32_at(bytes, 0x2C).unwrap_or(0) as usize;
    let dir_start = u32_at(bytes, 0x30).unwrap_or(END_OF_CHAIN);
    let minifat_start = u32_at(bytes, 0x3C).unwrap_or(END_OF_CHAIN);
    let n_minifat = u32_at(bytes, 0x40).unwrap_or(0) as usize;
    let difat_start = u32_at(bytes, 0x44).unwrap_or(END_OF_CHAIN);
    let n_difat = u32_at(bytes, 0x48).unwrap_or(0) as usize;
    if n_fat > sectors.count || n_difat > sectors.count || n_minifat > sectors.count {
        return Err(damaged("the header claims more allocation sectors than the file holds"));
    }
    // The DIFAT: 109 entries in the header, then a chain of sectors whose
    // last entry names the next.
    let mut difat: Vec<u32> = u32s(&bytes[0x4C..0x200]).collect();
    let mut id = difat_start;
    let mut seen = 0;
    while id < RESERVED {
        seen += 1;
        if seen > sectors.count {
            return Err(damaged("the chain of allocation-table sectors loops"));
        }
        difat.extend(u32s(sectors.get(id, "chain of allocation-table sectors")?));
        id = difat.pop().unwrap_or(END_OF_CHAIN);
    }
    // The FAT: every DIFAT entry below DIFAT_SECTOR, in order (the library
    // does not stop at the header's count).
    let fat_ids: Vec<u32> = difat.into_iter().filter(|&id| id < DIFAT_SECTOR).collect();
    if fat_ids.len() > sectors.count + 109 {
        return Err(damaged("the file lists more allocation-table sectors than it holds"));
    }
    let mut fat = Vec::with_capacity(fat_ids.len() * (size / 4));
    for id in fat_ids {
        fat.extend(u32s(sectors.get(id, "list of allocation-table sectors")?));
    }
    let dir = sectors.chain(dir_start, &fat, u64::MAX, "directory chain")?;
    let entries: Vec<Entry> = dir
        .chunks_exact(128)
        .map(|e| {
            // Decoded as the library does (with byte-order-mark sniffing),
            // up to the first NUL.
            let (name, _, _) = encoding_rs::UTF_16LE.decode(&e[..64]);
            let name = name.split('\0').next().unwrap_or("").to_string();
            let start = u32_at(e, 0x74).unwrap_or(END_OF_CHAIN);
            let len = if size == 512 { u32_at(e, 0x78).unwrap_or(0) as u64 } else { u64_at(e, 0x78).unwrap_or(0) };
            Entry { name, start, len }
        })
        .collect();
    let Some(root) = entries.first() else {
        return Err(damaged("the file has no directory"));
    };
    if version != 3 && root.start == END_OF_CHAIN {
        return Err(damaged("the directory has no root entry"));
    }
    // The library keeps entry sizes in a machine word; in wasm that is
    // 32 bits, and a larger size stops it.
    if entries.iter().any(|e| e.len > u32::MAX as u64) {
        return Err(damaged("a directory entry gives a size of more than 4 GB"));
    }
    // The small-block stream and its table, loaded only when the header
    // counts small-block table sectors.
    let (ministream, minifat) = if n_minifat > 0 {
        let ministream = sectors.chain(root.start, &fat, root.len, "small-block stream")?;
        if (ministream.len() as u64) < root.len {
            return Err(damaged("the small-block stream is shorter than its directory entry says"));
        }
        let table = sectors.chain(minifat_start, &fat, (n_minifat * size) as u64, "small-block table")?;
        (ministream, u32s(&table).collect::<Vec<u32>>())
    } else {
        (Vec::new(), Vec::new())
    };
    let minis = Blocks { bytes: &ministream, offset: 0, size: 64, count: ministream.len() / 64 };
    let find = |wanted: &str| entries.iter().find(|e| e.name.as_bytes().eq_ignore_ascii_case(wanted.as_bytes()));
    let Some(entry) = find("Workbook").or_else(|| find("Book")) else {
        return Ok(None);
    };
    // Streams under 4096 bytes live in the small-block stream (the library
    // uses this fixed cutoff, not the header's).
    let stream = if entry.len < 4096 {
        minis.chain(entry.start, &minifat, entry.len, "workbook stream")?
    } else {
        sectors.chain(entry.start, &fat, entry.len, "workbook stream")?
    };
    if (stream.len() as u64) < entry.len {
        return Err(damaged("the workbook stream is shorter than its directory entry says"));
    }
    Ok(Some(stream))
}

// ---------------------------------------------------------------------------
// The workbook stream

/// One record with the CONTINUE records that follow it, as the library
/// groups them.
struct Record<'a> {
    kind: u16,
    data: &'a [u8],
    cont: std::collections::VecDeque<&'a [u8]>,
}

impl Record<'_> {
    /// The next CONTINUE record's body becomes `data`.
    fn next_part(&mut self) -> bool {
        match self.cont.pop_front() {
            Some(d) => {
                self.data = d;
                true
            }
            None => false,
        }
    }

    /// Skips `len` bytes across CONTINUE records; false where the library
    /// returns an error.
    fn skip(&mut self, mut len: u64) -> bool {
        while len > 0 {
            if self.data.is_empty() && !self.next_part() {
                return false;
            }
            let l = len.min(self.data.len() as u64) as usize;
            self.data = &self.data[l..];
            len -= l as u64;
        }
        true
    }
}

/// The records from the start of `stream`; an `Err` item (a record longer
/// than the bytes left) ends the library's reading with an error.
struct Records<'a> {
    stream: &'a [u8],
}

impl<'a> Iterator for Records<'a> {
    type Item = Result<Record<'a>, ()>;
    fn next(&mut self) -> Option<Self::Item> {
        let s = self.stream;
        if s.len() < 4 {
            return if s.is_empty() { None } else { Some(Err(())) };
        }
        let kind = u16_at(s, 0).unwrap_or(0);
        let len = u16_at(s, 2).unwrap_or(0) as usize;
        if s.len() < len + 4 {
            return Some(Err(()));
        }
        let data = &s[4..4 + len];
        self.stream = &s[4 + len..];
        let mut cont = std::collections::VecDeque::new();
        if self.stream.len() > 4 && u16_at(self.stream, 0) == Some(0x003C) {
            while self.stream.len() > 4 && u16_at(self.stream, 0) == Some(0x003C) {
                let l = u16_at(self.stream, 2).unwrap_or(0) as usize;
                if self.stream.len() < l + 4 {
                    return Some(Err(()));
                }
                cont.push_back(&self.stream[4..4 + l]);
                self.stream = &self.stream[4 + l..];
            }
        }
        Some(Ok(Record { kind, data, cont }))
    }
}

/// What the walk of a part of the stream found.
enum Walk<T> {
    /// The library goes on.
    Go(T),
    /// The library stops with an error of its own.
    Stop,
}

use Walk::{Go, Stop};

/// The records that are checked, for messages.
fn record_name(kind: u16) -> &'static str {
    match kind {
        0x002F => "a FILEPASS record",
        0x0042 => "a CODEPAGE record",
        0x0022 => "a DATEMODE record",
        0x0085 => "a BOUNDSHEET record (a sheet's name and start)",
        0x0809 => "a BOF record",
        0x0018 => "an LBL record (a defined name)",
        0x0017 => "an EXTERNSHEET record",
        0x00FC => "the SST record (the shared strings)",
        0x00E5 => "a MERGECELLS record",
        _ => "a record",
    }
}

fn short(kind: u16) -> String {
    damaged(format_args!("{} is shorter than its contents", record_name(kind)))
}

/// The BIFF version a BOF record starts, as the library reads it: true for
/// BIFF8, false for BIFF2 to BIFF5.
fn bof_is_biff8(data: &[u8]) -> bool {
    let dt = if data.len() >= 4 { u16_at(data, 2).unwrap_or(0) } else { 0 };
    match u16_at(data, 0).unwrap_or(0) {
        0x0200 | 0x0002 | 0x0007 | 0x0300 | 0x0400 | 0x0500 => false,
        0 => dt != 0x1000,
        _ => true,
    }
}

/// Whether the library's `parse_string` (an XLUnicodeString, or a byte
/// string before BIFF8) returns a string rather than an error.
fn string_reads(r: &[u8], biff8: bool) -> bool {
    let expected = if biff8 { 3 } else { 2 };
    r.len() >= expected || (r.len() == 2 && r == [0, 0])
}

/// What the workbook globals (the records up to the first EOF) hold that
/// the sheets depend on.
struct Globals {
    biff8: bool,
    /// Where each sheet's records start, in BOUNDSHEET order.
    sheets: Vec<usize>,
    /// Upper bounds on the bytes of each shared string.
    shared: Vec<u64>,
    /// Upper bounds on the bytes of a sheet name and of a defined name.
    sheet_name: u64,
    defined_name: u64,
}

fn check_workbook(stream: &[u8], max_cells: u64) -> Result<(), String> {
    let Go(globals) = check_globals(stream)? else { return Ok(()) };
    let mut cells = 0u64;
    let mut shared_text = 0u64;
    let mut formula_work = 0u64;
    let mut done: std::collections::HashMap<usize, Sheet> = std::collections::HashMap::new();
    for &pos in &globals.sheets {
        if pos > stream.len() {
            return Err(damaged(format_args!(
                "a sheet starts at byte {pos} of the workbook stream, which has only {} bytes",
                stream.len()
            )));
        }
        // The library reads each sheet from its start, even one named twice.
        let sheet = match done.get(&pos) {
            Some(s) => *s,
            None => {
                let s = check_sheet(&stream[pos..], &globals, max_cells)?;
                done.insert(pos, s);
                s
            }
        };
        cells = cells.saturating_add(sheet.grid);
        shared_text = shared_text.saturating_add(sheet.shared_text);
        formula_work = formula_work.saturating_add(sheet.formula_work);
        if cells > max_cells {
            return Err(format!("the sheets hold more than {max_cells} cells in all, more than plumbline holds"));
        }
        if shared_text > MAX_SHARED_TEXT {
            return Err(format!(
                "the sheets repeat their shared text to more than {} MB, more than plumbline holds",
                MAX_SHARED_TEXT >> 20
            ));
        }
        if formula_work > MAX_ALL_FORMULA_WORK {
            return Err(damaged("its formulas are too long to be read in reasonable time"));
        }
        if sheet.stopped {
            break;
        }
    }
    Ok(())
}

/// The records from the start of the stream to the first EOF.
fn check_globals(stream: &[u8]) -> Result<Walk<Globals>, String> {
    let mut g = Globals { biff8: true, sheets: Vec::new(), shared: Vec::new(), sheet_name: 0, defined_name: 0 };
    for record in (Records { stream }) {
        let Ok(mut r) = record else { return Ok(Stop) };
        let d = r.data;
        match r.kind {
            0x002F | 0x0042 | 0x0022 if d.len() < 2 => return Err(short(r.kind)),
            0x002F if u16_at(d, 0) != Some(0) => return Ok(Stop),
            0x0809 if d.len() < 2 => return Err(short(r.kind)),
            0x0809 => g.biff8 = bof_is_biff8(d),
            0x00E0 if d.len() < 4 => return Ok(Stop),
            0x0085 => {
                if d.len() < 6 {
                    return Err(short(r.kind));
                }
                if !matches!(d[4] & 0x3F, 0..=2) || !matches!(d[5], 0 | 1 | 2 | 6) {
                    return Ok(Stop);
                }
                if d.len() < 7 || (d.len() < 8 && g.biff8) {
                    return Ok(Stop);
                }
                g.sheets.push(u32_at(d, 0).unwrap_or(0) as usize);
                g.sheet_name = g.sheet_name.max(4 * (d.len() as u64 - 6));
            }
            0x0018 => match check_defined_name(d, g.biff8) {
                Err(()) => return Err(short(r.kind)),
                Ok(Stop) => return Ok(Stop),
                Ok(Go(())) => g.defined_name = g.defined_name.max(4 * d.len() as u64),
            },
            0x0017 if g.biff8 && d.len() < 2 => return Err(short(r.kind)),
            0x00FC => match shared_strings(&mut r) {
                Err(()) => return Err(short(r.kind)),
                Ok(Stop) => return Ok(Stop),
                Ok(Go(s)) => g.shared = s,
            },
            0x000A => break,
            _ => {}
        }
    }
    Ok(Go(g))
}

/// LBL, a defined name: `Err` where the library would read past its end.
fn check_defined_name(d: &[u8], biff8: bool) -> Result<Walk<()>, ()> {
    if d.len() < 14 {
        return Err(());
    }
    let cch = d[3] as usize;
    let cce = u16_at(d, 4).unwrap_or(0) as usize;
    if biff8 {
        let Some(&flags) = d.get(14) else { return Ok(Stop) };
        let consumed = 1 + if flags & 1 != 0 { 2 * cch } else { cch };
        if d.len() - 14 < consumed {
            return Ok(Stop);
        }
    }
    if cce > d.len() {
        return Err(());
    }
    let rgce = &d[d.len() - cce..];
    let need = match rgce.first() {
        None => 0,
        Some(0x3A | 0x5A | 0x7A) => {
            if biff8 {
                7
            } else {
                18
            }
        }
        Some(0x3B | 0x5B | 0x7B) => {
            if biff8 {
                11
            } else {
                21
            }
        }
        Some(0x3C | 0x5C | 0x7C | 0x3D | 0x5D | 0x7D) => {
            if biff8 {
                3
            } else {
                13
            }
        }
        Some(_) => 0,
    };
    if rgce.len() < need {
        return Err(());
    }
    Ok(Go(()))
}

/// SST: upper bounds on the bytes of each string, as the library reads
/// them across CONTINUE records; `Err` where it would read past an end.
fn shared_strings(r: &mut Record) -> Result<Walk<Vec<u64>>, ()> {
    if r.data.len() < 8 {
        return Ok(Stop);
    }
    r.data = &r.data[8..];
    let mut out = Vec::new();
    while !r.data.is_empty() || r.next_part() {
        if r.data.is_empty() {
            out.push(0);
            continue;
        }
        if r.data.len() < 3 {
            return Ok(Stop);
        }
        let mut left = u16_at(r.data, 0).unwrap_or(0) as u64;
        let flags = r.data[2];
        r.data = &r.data[3..];
        let mut high = flags & 1 != 0;
        let mut runs = 0u64;
        let mut ext = 0u64;
        if flags & 0x8 != 0 {
            runs = u16_at(r.data, 0).ok_or(())? as u64;
            r.data = &r.data[2..];
        }
        if flags & 0x4 != 0 {
            // A negative count becomes a huge one, as in the library.
            ext = u32_at(r.data, 0).ok_or(())? as i32 as i64 as u64;
            r.data = &r.data[4..];
        }
        let mut bytes = 0u64;
        while left > 0 {
            let (n, at) = if high {
                let n = (r.data.len() as u64 / 2).min(left);
                (n, 2 * n)
            } else {
                let n = (r.data.len() as u64).min(left);
                (n, n)
            };
            r.data = &r.data[at as usize..];
            bytes += at;
            left -= n;
            if left > 0 {
                if !r.next_part() {
                    return Ok(Stop);
                }
                let Some(&f) = r.data.first() else { return Err(()) };
                high = f & 1 != 0;
                r.data = &r.data[1..];
            }
        }
        if !r.skip(runs * 4) || !r.skip(ext) {
            return Ok(Stop);
        }
        out.push(4 * bytes);
    }
    Ok(Go(out))
}

/// What one sheet costs the library.
#[derive(Clone, Copy)]
struct Sheet {
    /// Cells of its value grid and formula grid.
    grid: u64,
    /// Upper bound on the bytes of shared text copied into its cells.
    shared_text: u64,
    formula_work: u64,
    /// The library stops with an error in this sheet.
    stopped: bool,
}

/// The bounding box of the cells the library puts in one grid.
#[derive(Default)]
struct Extent {
    rows: Option<(u32, u32)>,
    cols: Option<(u32, u32)>,
}

impl Extent {
    fn add(&mut self, row: u32, col: u32) -> Result<(), String> {
        if col as u64 >= MAX_COLUMNS {
            return Err(damaged(format_args!(
                "a cell lies in column {}, past the last column ({MAX_COLUMNS}) an .xls sheet can have",
                col as u64 + 1
            )));
        }
        let widen = |r: Option<(u32, u32)>, v: u32| Some(r.map_or((v, v), |(a, b)| (a.min(v), b.max(v))));
        self.rows = widen(self.rows, row);
        self.cols = widen(self.cols, col);
        Ok(())
    }

    fn cells(&self) -> u64 {
        match (self.rows, self.cols) {
            (Some((r0, r1)), Some((c0, c1))) => (r1 - r0 + 1) as u64 * (c1 - c0 + 1) as u64,
            _ => 0,
        }
    }
}

/// The records of one sheet, from its start to its EOF, skipping nested
/// substreams (charts) as the library does.
fn check_sheet(stream: &[u8], g: &Globals, max_cells: u64) -> Result<Sheet, String> {
    let mut values = Extent::default();
    let mut formulas = Extent::default();
    let mut sheet = Sheet { grid: 0, shared_text: 0, formula_work: 0, stopped: false };
    let mut formula_at = (0u32, 0u32);
    let mut seen_bof = false;
    let mut depth = 0usize;
    let too_many = |what: &Extent| -> Result<(), String> {
        if what.cells() > max_cells {
            Err(format!("a sheet's cells span a grid of {} cells, more than plumbline holds", what.cells()))
        } else {
            Ok(())
        }
    };
    for record in (Records { stream }) {
        let Ok(r) = record else {
            sheet.stopped = true;
            break;
        };
        let d = r.data;
        if depth > 0 {
            match r.kind {
                0x0809 => depth += 1,
                0x000A => depth -= 1,
                _ => {}
            }
            continue;
        }
        let row = u16_at(d, 0).unwrap_or(0) as u32;
        let col = u16_at(d, 2).unwrap_or(0) as u32;
        let stop = match r.kind {
            0x0809 => {
                if seen_bof {
                    depth += 1;
                } else {
                    seen_bof = true;
                }
                false
            }
            // DIMENSIONS: the library reserves room for rows × columns cells.
            0x0200 => {
                let (rf, rl, mut cf, cl) = match d.len() {
                    10 => (row, col, u16_at(d, 4).unwrap_or(0) as u32, u16_at(d, 6).unwrap_or(0) as u32),
                    14 | 16 => (
                        u32_at(d, 0).unwrap_or(0),
                        u32_at(d, 4).unwrap_or(0),
                        u16_at(d, 8).unwrap_or(0) as u32,
                        u16_at(d, 10).unwrap_or(0) as u32,
                    ),
                    _ => {
                        sheet.stopped = true;
                        break;
                    }
                };
                if cf > 0xFF || cl < cf {
                    cf = 0;
                }
                let (end_r, end_c) = if rl >= 1 && cl >= 1 { (rl - 1, cl - 1) } else { (rf, cf) };
                let rows = end_r.wrapping_sub(rf).wrapping_add(1) as u64;
                let cols = end_c.wrapping_sub(cf).wrapping_add(1) as u64;
                let grid = format!("{} by {}", plural(rows, "row"), plural(cols, "column"));
                if rows > MAX_ROWS || cols > MAX_COLUMNS {
                    return Err(damaged(format_args!("a sheet declares {grid}, more than an .xls sheet can have")));
                }
                if rows * cols > max_cells {
                    return Err(format!("a sheet declares {grid}, more than plumbline holds"));
                }
                false
            }
            0x0203 if d.len() < 14 => true,
            0x0203 => {
                values.add(row, col)?;
                false
            }
            0x0204 | 0x00D6 if d.len() < 6 || !string_reads(&d[6..], g.biff8) => true,
            0x0204 | 0x00D6 => {
                values.add(row, col)?;
                false
            }
            0x0205 if d.len() < 8 => true,
            0x0205 => match (d[7], d[6]) {
                (0, _) | (1, 0x00 | 0x07 | 0x0F | 0x17 | 0x1D | 0x24 | 0x2A | 0x2B) => {
                    values.add(row, col)?;
                    false
                }
                _ => true,
            },
            0x0207 if !string_reads(d, g.biff8) => true,
            0x0207 => {
                values.add(formula_at.0, formula_at.1)?;
                false
            }
            0x027E if d.len() < 10 => true,
            0x027E => {
                values.add(row, col)?;
                false
            }
            0x00FD if d.len() < 10 => true,
            0x00FD => {
                if let Some(&text) = g.shared.get(u32_at(d, 6).unwrap_or(0) as usize) {
                    values.add(row, col)?;
                    sheet.shared_text = sheet.shared_text.saturating_add(text);
                }
                false
            }
            0x00BD if d.len() < 6 => true,
            0x00BD => {
                let first = col as u16;
                let last = u16_at(d, d.len() - 2).unwrap_or(0);
                if last < first || last - first == 0xFFFF {
                    return Err(damaged("a MULRK record's last column comes before its first"));
                }
                let n = last.wrapping_sub(first).wrapping_add(1) as usize;
                if d.len() != 6 + 6 * n {
                    true
                } else {
                    if n > 0 {
                        values.add(row, first as u32)?;
                        values.add(row, first as u32 + n as u32 - 1)?;
                    }
                    false
                }
            }
            0x00E5 => {
                let count = u16_at(d, 0).ok_or_else(|| short(r.kind))? as usize;
                if d.len() < 2 + 8 * count {
                    return Err(short(r.kind));
                }
                false
            }
            0x000A => break,
            0x0006 => {
                if d.len() < 20 {
                    true
                } else {
                    formula_at = (row, col);
                    let v = &d[6..14];
                    let value = if v[6] == 0xFF && v[7] == 0xFF {
                        match v[0] {
                            0x00 => Go(false),
                            0x01 | 0x03 => Go(true),
                            0x02 if matches!(v[2], 0x00 | 0x07 | 0x0F | 0x17 | 0x1D | 0x24 | 0x2A | 0x2B) => Go(true),
                            _ => Stop,
                        }
                    } else {
                        Go(true)
                    };
                    match value {
                        Stop => true,
                        Go(has_value) => {
                            if has_value {
                                values.add(row, col)?;
                            }
                            let work = formula_work(&d[20..], g).map_err(|()| {
                                damaged(format_args!(
                                    "the formula in row {}, column {} runs past its record",
                                    row + 1,
                                    col + 1
                                ))
                            })?;
                            if work > MAX_FORMULA_WORK {
                                return Err(damaged(format_args!(
                                    "the formula in row {}, column {} is too long to be read in reasonable time",
                                    row + 1,
                                    col + 1
                                )));
                            }
                            sheet.formula_work = sheet.formula_work.saturating_add(work);
                            formulas.add(row, col)?;
                            false
                        }
                    }
                }
            }
            _ => false,
        };
        too_many(&values)?;
        too_many(&formulas)?;
        if stop {
            sheet.stopped = true;
            break;
        }
    }
    sheet.grid = values.cells() + formulas.cells();
    Ok(sheet)
}

/// Walks a formula's tokens (a CellParsedFormula: a 2-byte length, then the
/// tokens) the way the library prints them, and returns an upper bound on
/// the bytes its printer moves. `Err` where the library would read past
/// the end of the tokens. Where the library stops with an error the walk
/// stops too. The depth of the printer's operand stack is followed except
/// after a fixed-argument function, whose argument count comes from a table
/// inside the library; there the walk assumes the stack is not empty, which
/// can only make it stricter.
fn formula_work(f: &[u8], g: &Globals) -> Result<u64, ()> {
    let cce = u16_at(f, 0).ok_or(())? as usize;
    let mut t = f.get(2..2 + cce).ok_or(())?;
    let biff8 = g.biff8;
    // Upper bounds on the printed text and on the work so far.
    let mut text = cce as u64;
    let mut work = cce as u64;
    // The depth of the operand stack, when known.
    let mut depth: Option<u64> = Some(0);
    let push = |depth: &mut Option<u64>| *depth = depth.map(|d| d + 1);
    let empty = |depth: Option<u64>| depth == Some(0);
    // Takes `n` bytes, or says the library would read past the end.
    fn take<'a>(t: &mut &'a [u8], n: usize) -> Result<&'a [u8], ()> {
        let (head, rest) = (t.get(..n).ok_or(())?, t.get(n..).ok_or(())?);
        *t = rest;
        Ok(head)
    }
    while let Some((&ptg, rest)) = t.split_first() {
        t = rest;
        // The printer moves at most the whole text for each step below.
        match ptg {
            0x3A | 0x5A | 0x7A | 0x3C | 0x5C | 0x7C => {
                take(&mut t, 6)?;
                push(&mut depth);
                text += g.sheet_name + 16;
            }
            0x3B | 0x5B | 0x7B | 0x3D | 0x5D | 0x7D => {
                take(&mut t, 10)?;
                push(&mut depth);
                text += g.sheet_name + 32;
            }
            0x01 => {
                if t.len() < 4 {
                    break;
                }
                take(&mut t, 4)?;
                push(&mut depth);
            }
            0x03..=0x11 => {
                if empty(depth) {
                    break;
                }
                depth = depth.map(|d| d - 1);
                text += 2;
                work += 2 * text;
            }
            0x12 | 0x13 | 0x15 => {
                if empty(depth) {
                    break;
                }
                text += 2;
                work += text;
            }
            0x14 => text += 1,
            0x16 => push(&mut depth),
            0x17 => {
                push(&mut depth);
                let Some(&cch) = t.first() else { break };
                let cch = cch as usize;
                let n = if biff8 {
                    let Some(&flags) = t.get(1) else { break };
                    1 + if flags & 1 != 0 { 2 * cch } else { cch }
                } else {
                    cch
                };
                if t.len() < 1 + n {
                    break;
                }
                take(&mut t, 1 + n)?;
                text += 2 + 4 * n as u64;
            }
            0x18 => {
                take(&mut t, 5)?;
            }
            0x19 => {
                let etpg = take(&mut t, 1)?[0];
                match etpg {
                    0x01 | 0x02 | 0x08 | 0x20 | 0x21 => {
                        take(&mut t, 2)?;
                    }
                    0x04 => {
                        let n = u16_at(t, 0).ok_or(())? as usize + 1;
                        take(&mut t, 2 + 2 * n)?;
                    }
                    0x10 => {
                        take(&mut t, 2)?;
                        if empty(depth) {
                            break;
                        }
                        text += 5;
                        work += 2 * text;
                    }
                    0x40 | 0x41 => {
                        if empty(depth) {
                            break;
                        }
                        let kind = *t.first().ok_or(())?;
                        if kind > 0x06 {
                            break;
                        }
                        let spaces = *t.get(1).ok_or(())? as u64;
                        take(&mut t, 2)?;
                        text += spaces;
                        work += spaces * text;
                    }
                    _ => break,
                }
            }
            0x1C => {
                push(&mut depth);
                let e = take(&mut t, 1)?[0];
                if !matches!(e, 0x00 | 0x07 | 0x0F | 0x17 | 0x1D | 0x24 | 0x2A | 0x2B) {
                    break;
                }
                text += 14;
            }
            0x1D => {
                push(&mut depth);
                take(&mut t, 1)?;
                text += 5;
            }
            0x1E => {
                push(&mut depth);
                take(&mut t, 2)?;
                text += 5;
            }
            0x1F => {
                push(&mut depth);
                take(&mut t, 8)?;
                // A double printed in full can take over 300 digits.
                text += 400;
            }
            0x20 | 0x40 | 0x60 => {
                push(&mut depth);
                take(&mut t, 7)?;
                text += 10;
            }
            0x21 | 0x22 | 0x41 | 0x42 | 0x61 | 0x62 => {
                let argc = if matches!(ptg, 0x22 | 0x42 | 0x62) {
                    let head = take(&mut t, 3)?;
                    let argc = head[0] as u64;
                    if u16_at(head, 1).unwrap_or(0) >= 485 {
                        break;
                    }
                    if let Some(d) = depth {
                        if d < argc {
                            break;
                        }
                        depth = Some(d - argc + 1);
                    }
                    argc
                } else {
                    let iftab = u16_at(t, 0).ok_or(())?;
                    take(&mut t, 2)?;
                    // The library's function table has 485 entries.
                    if iftab >= 485 {
                        break;
                    }
                    depth = None;
                    255
                };
                text += 18 + 2 + argc;
                work += 2 * text;
            }
            0x23 | 0x43 | 0x63 => {
                push(&mut depth);
                take(&mut t, 4)?;
                text += g.defined_name.max(5);
            }
            0x24 | 0x44 | 0x64 => {
                push(&mut depth);
                take(&mut t, if biff8 { 4 } else { 3 })?;
                text += 16;
            }
            0x25 | 0x45 | 0x65 => {
                push(&mut depth);
                take(&mut t, if biff8 { 8 } else { 6 })?;
                text += 32;
            }
            0x2A | 0x4A | 0x6A => {
                push(&mut depth);
                take(&mut t, if biff8 { 4 } else { 3 })?;
                text += 5;
            }
            0x2B | 0x4B | 0x6B => {
                push(&mut depth);
                take(&mut t, if biff8 { 8 } else { 6 })?;
                text += 5;
            }
            0x39 | 0x59 => {
                push(&mut depth);
                take(&mut t, 6)?;
                text += 10;
            }
            _ => break,
        }
        if work > MAX_FORMULA_WORK {
            break;
        }
    }
    // Appending the text itself is the last of the work.
    Ok(work + text)
}

#[cfg(test)]
mod tests {
    use super::check;
    use std::path::PathBuf;

    fn file(path: &str) -> Vec<u8> {
        let p = PathBuf::from(env!("CARGO_MANIFEST_DIR")).join(path);
        std::fs::read(&p).unwrap_or_else(|e| panic!("cannot read {}: {e}", p.display()))
    }

    /// Real .xls files (written by three different programs) pass.
    #[test]
    fn real_files_pass() {
        for path in [
            "tests/data/files/deliveries.xls",
            "tests/fuzz/corpus/read_workbook/deliveries.xls",
            "tests/fuzz/corpus/read_workbook/formulas.xls",
            "tests/fuzz/corpus/read_workbook/xlwt-small.xls",
        ] {
            assert_eq!(check(&file(path), 50_000_000), Ok(()), "{path}");
        }
    }

    /// Each .xls input that once crashed the reader is refused here, before
    /// the workbook library runs, with a message saying why.
    #[test]
    fn damaged_files_are_refused() {
        for (name, words) in [
            ("ole-guard-difat-count", "more allocation sectors"),
            ("xls-directory-chain-cycle", "loops"),
            ("xls-sector-past-end", "past the end of the file"),
            ("xls-huge-sparse-range", "past the last column"),
            ("xls-mulrk-subtract-overflow", "MULRK"),
            ("xls-short-record-globals", "shorter than its contents"),
            ("xls-short-boundsheet", "BOUNDSHEET"),
            ("xls-short-externsheet", "EXTERNSHEET"),
            ("xls-short-defined-name", "LBL"),
            ("xls-sheet-start-past-end", "a sheet starts at byte"),
            ("xls-formula-past-record", "formula"),
            ("xls-dimensions-wrap", "more than an .xls sheet can have"),
            ("xls-cell-past-column-256", "past the last column"),
            ("xls-wide-sparse-grid", "past the last column"),
        ] {
            let path = format!("tests/fuzz/regressions/read_workbook-{name}");
            match check(&file(&path), 50_000_000) {
                Ok(()) => panic!("{path} passed the check"),
                Err(why) => assert!(why.contains(words), "{path}: {why}"),
            }
        }
    }

    /// A sheet larger than the cell limit is refused from its DIMENSIONS.
    #[test]
    fn the_cell_limit_counts() {
        let bytes = file("tests/data/files/deliveries.xls");
        let why = check(&bytes, 100).unwrap_err();
        assert!(why.contains("more than plumbline holds"), "{why}");
    }
}
