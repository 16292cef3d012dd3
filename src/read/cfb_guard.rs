//! A structural check of OLE compound files (the container of .xls),
//! run before the workbook reader sees the bytes: every sector chain must
//! stay inside the file and end without looping. A damaged or hostile file
//! that breaks this is refused with a message, instead of sending the
//! reader into an endless allocation or past the end of the bytes.
//!
//! Layout as published in [MS-CFB], "Compound File Binary File Format"
//! (Microsoft Open Specifications), §2.2 (header), §2.3 (FAT), §2.5
//! (DIFAT) and §2.6 (directory entries).

const END_OF_CHAIN: u32 = 0xFFFF_FFFE;
const FREE: u32 = 0xFFFF_FFFF;

fn u16_at(b: &[u8], i: usize) -> Option<u16> {
    b.get(i..i + 2).map(|x| u16::from_le_bytes([x[0], x[1]]))
}

fn u32_at(b: &[u8], i: usize) -> Option<u32> {
    b.get(i..i + 4).map(|x| u32::from_le_bytes([x[0], x[1], x[2], x[3]]))
}

struct Cfb<'a> {
    bytes: &'a [u8],
    sector: usize,
    sectors: usize,
    fat: Vec<u32>,
}

impl Cfb<'_> {
    fn sector_bytes(&self, id: u32) -> Result<&[u8], String> {
        let id = id as usize;
        if id >= self.sectors {
            return Err(format!("sector {id} lies past the end of the file"));
        }
        let start = (id + 1) * self.sector;
        Ok(&self.bytes[start..start + self.sector])
    }

    /// The sectors of the chain from `start`, refusing loops and strays.
    fn chain(&self, start: u32, table: &[u32], limit: usize, what: &str) -> Result<Vec<u32>, String> {
        let mut out = Vec::new();
        let mut s = start;
        while s != END_OF_CHAIN && s != FREE {
            if s as usize >= limit || s as usize >= table.len() {
                return Err(format!("the {what} chain points outside the file (sector {s})"));
            }
            if out.len() > table.len() {
                return Err(format!("the {what} chain loops back on itself"));
            }
            out.push(s);
            s = table[s as usize];
        }
        Ok(out)
    }
}

/// Checks the container, and that no sheet declares more than `max_cells`
/// cells; `Err` says what is wrong in plain words.
pub fn check(bytes: &[u8], max_cells: usize) -> Result<(), String> {
    if bytes.len() < 512 {
        return Err("the file is shorter than its header".into());
    }
    let shift = u16_at(bytes, 0x1E).unwrap_or(0);
    if shift != 9 && shift != 12 {
        return Err(format!("the header gives an impossible sector size (2^{shift})"));
    }
    let sector = 1usize << shift;
    let sectors = (bytes.len() / sector).saturating_sub(1);
    let n_fat = u32_at(bytes, 0x2C).unwrap_or(0) as usize;
    let first_dir = u32_at(bytes, 0x30).unwrap_or(END_OF_CHAIN);
    let cutoff = u32_at(bytes, 0x38).unwrap_or(4096) as u64;
    let first_minifat = u32_at(bytes, 0x3C).unwrap_or(END_OF_CHAIN);
    let mut difat_next = u32_at(bytes, 0x44).unwrap_or(END_OF_CHAIN);
    let n_difat = u32_at(bytes, 0x48).unwrap_or(0) as usize;
    if n_fat > sectors || n_difat > sectors || u32_at(bytes, 0x40).unwrap_or(0) as usize > sectors {
        return Err("the header claims more allocation sectors than the file holds".into());
    }
    // The FAT sectors: 109 in the header, the rest along the DIFAT chain.
    let mut fat_ids: Vec<u32> = (0..109).filter_map(|k| u32_at(bytes, 0x4C + 4 * k)).filter(|&s| s != FREE).collect();
    let mut seen = 0;
    let per = sector / 4 - 1;
    let mut cfb = Cfb { bytes, sector, sectors, fat: Vec::new() };
    while difat_next != END_OF_CHAIN && difat_next != FREE {
        seen += 1;
        if seen > n_difat.max(1) + sectors {
            return Err("the chain of allocation-table sectors loops".into());
        }
        let s = cfb.sector_bytes(difat_next)?;
        fat_ids.extend((0..per).filter_map(|k| u32_at(s, 4 * k)).filter(|&x| x != FREE));
        difat_next = u32_at(s, 4 * per).unwrap_or(END_OF_CHAIN);
    }
    fat_ids.truncate(n_fat);
    let mut fat = Vec::with_capacity(fat_ids.len() * (sector / 4));
    for &id in &fat_ids {
        let s = cfb.sector_bytes(id)?;
        fat.extend((0..sector / 4).filter_map(|k| u32_at(s, 4 * k)));
    }
    cfb.fat = fat;
    let fat = cfb.fat.clone();
    let dir = cfb.chain(first_dir, &fat, sectors, "directory")?;
    if dir.is_empty() {
        return Err("the file has no directory".into());
    }
    let minifat_sectors = cfb.chain(first_minifat, &fat, sectors, "small-block table")?;
    let mut minifat = Vec::new();
    for &id in &minifat_sectors {
        let s = cfb.sector_bytes(id)?;
        minifat.extend((0..sector / 4).filter_map(|k| u32_at(s, 4 * k)));
    }
    let major = u16_at(bytes, 0x1A).unwrap_or(3);
    let mut mini_stream_size = 0u64;
    let mut mini_root: Vec<u32> = Vec::new();
    let mut streams: Vec<(u32, u64, String)> = Vec::new();
    for &d in &dir {
        let s = cfb.sector_bytes(d)?;
        for e in 0..sector / 128 {
            let base = e * 128;
            let kind = s[base + 0x42];
            let start = u32_at(s, base + 0x74).unwrap_or(END_OF_CHAIN);
            let size_lo = u32_at(s, base + 0x78).unwrap_or(0) as u64;
            let size_hi = u32_at(s, base + 0x7C).unwrap_or(0) as u64;
            let size = if major >= 4 { size_lo | (size_hi << 32) } else { size_lo };
            let name_len = (u16_at(s, base + 0x40).unwrap_or(0) as usize).min(64);
            let name: String = char::decode_utf16((0..name_len / 2).filter_map(|k| u16_at(s, base + 2 * k)).take_while(|&c| c != 0))
                .map(|c| c.unwrap_or('?'))
                .collect();
            match kind {
                5 => {
                    let root = cfb.chain(start, &fat, sectors, "small-block stream")?;
                    mini_stream_size = root.len() as u64 * sector as u64;
                    if size > mini_stream_size {
                        return Err("the small-block stream is longer than its sectors".into());
                    }
                    mini_root = root;
                }
                2 => streams.push((start, size, name)),
                _ => {}
            }
        }
    }
    let mini_sectors = (mini_stream_size / 64) as usize;
    for (start, size, name) in streams {
        let data: Vec<u8> = if size < cutoff {
            let c = cfb.chain(start, &minifat, mini_sectors, "small stream")?;
            if (c.len() as u64) * 64 < size {
                return Err("a small stream is longer than its blocks".into());
            }
            let mut d = Vec::new();
            for m in c {
                let (sec, off) = ((m as usize * 64) / sector, (m as usize * 64) % sector);
                let Some(&id) = mini_root.get(sec) else { return Err("a small stream points outside its container".into()) };
                d.extend_from_slice(&cfb.sector_bytes(id)?[off..off + 64]);
            }
            d
        } else {
            let c = cfb.chain(start, &fat, sectors, "stream")?;
            if (c.len() as u64) * (sector as u64) < size {
                return Err("a stream is longer than its sectors".into());
            }
            let mut d = Vec::with_capacity(c.len() * sector);
            for id in c {
                d.extend_from_slice(cfb.sector_bytes(id)?);
            }
            d
        };
        if name == "Workbook" || name == "Book" {
            check_dimensions(&data[..(size as usize).min(data.len())], max_cells)?;
        }
    }
    Ok(())
}

/// The shortest body a record of this kind may have ([MS-XLS] §2.4), for
/// the records the workbook reader reads at fixed offsets.
fn min_len(kind: u16) -> Option<usize> {
    Some(match kind {
        0x002F | 0x0042 | 0x0022 => 2, // FILEPASS, CODEPAGE, DATEMODE
        0x0809 | 0x00E0 => 4,          // BOF, XF
        0x041E => 5,                   // FORMAT
        0x0085 => 8,                   // BOUNDSHEET8
        0x0017 | 0x00E5 => 2,          // EXTERNSHEET, MERGECELLS
        0x0006 => 20,                  // FORMULA
        0x0203 => 14,                  // NUMBER
        0x027E | 0x00FD => 10,         // RK, LABELSST
        0x0205 | 0x0204 => 8,          // BOOLERR, LABEL
        0x00BD => 6,                   // MULRK
        0x0200 => 10,                  // DIMENSIONS
        _ => return None,
    })
}

/// Scans the BIFF records of a workbook stream for sheet dimensions
/// (record 0x0200; BIFF8 layout: first row u32, last row + 1 u32, first
/// column u16, last column + 1 u16) and refuses a sheet that declares more
/// cells than the limit, since the reader sizes its grid from them.
fn check_dimensions(stream: &[u8], max_cells: usize) -> Result<(), String> {
    let mut at = 0;
    // The largest row and column any cell record of the current sheet names.
    let (mut max_row, mut max_col) = (0u64, 0u64);
    let too_big = |r: u64, c: u64| (r + 1).saturating_mul(c + 1) > max_cells as u64;
    while at + 4 <= stream.len() {
        let kind = u16_at(stream, at).unwrap_or(0);
        let len = u16_at(stream, at + 2).unwrap_or(0) as usize;
        let body = &stream[(at + 4).min(stream.len())..(at + 4 + len).min(stream.len())];
        if let Some(min) = min_len(kind) {
            if body.len() < min {
                return Err(format!("record {kind:#06x} is {} bytes long, shorter than its kind allows ({min})", body.len()));
            }
        }
        let counted = match kind {
            0x0017 => Some(2 + 6 * u16_at(body, 0).unwrap_or(0) as usize),
            0x00E5 => Some(2 + 8 * u16_at(body, 0).unwrap_or(0) as usize),
            _ => None,
        };
        if counted.is_some_and(|need| body.len() < need) {
            return Err(format!("record {kind:#06x} holds fewer entries than it counts"));
        }
        match kind {
            // BOF: a new sheet starts.
            0x0809 => (max_row, max_col) = (0, 0),
            // Cell records: row u16, column u16 first (MULRK and MULBLANK end with the last column).
            0x0006 | 0x00FD | 0x0203 | 0x027E | 0x0201 | 0x0204 | 0x0205 | 0x00D6 | 0x00BD | 0x00BE if body.len() >= 4 => {
                let row = u16_at(body, 0).unwrap_or(0) as u64;
                let mut col = u16_at(body, 2).unwrap_or(0) as u64;
                if (kind == 0x00BD || kind == 0x00BE) && body.len() >= 6 {
                    col = col.max(u16_at(body, body.len() - 2).unwrap_or(0) as u64);
                }
                max_row = max_row.max(row);
                max_col = max_col.max(col);
                if too_big(max_row, max_col) {
                    return Err(format!(
                        "a sheet has cells as far as row {} and column {}, more than plumbline holds",
                        max_row + 1,
                        max_col + 1
                    ));
                }
            }
            _ => {}
        }
        if kind == 0x0200 {
            let (rows, cols) = if body.len() >= 14 {
                let r = u32_at(body, 4).unwrap_or(0).saturating_sub(u32_at(body, 0).unwrap_or(0)) as u64;
                let c = u16_at(body, 10).unwrap_or(0).saturating_sub(u16_at(body, 8).unwrap_or(0)) as u64;
                (r, c)
            } else if body.len() >= 8 {
                let r = u16_at(body, 2).unwrap_or(0).saturating_sub(u16_at(body, 0).unwrap_or(0)) as u64;
                let c = u16_at(body, 6).unwrap_or(0).saturating_sub(u16_at(body, 4).unwrap_or(0)) as u64;
                (r, c)
            } else {
                (0, 0)
            };
            if rows.saturating_mul(cols) > max_cells as u64 {
                return Err(format!("a sheet declares {rows} rows by {cols} columns, more than plumbline holds"));
            }
        }
        at += 4 + len;
    }
    Ok(())
}
