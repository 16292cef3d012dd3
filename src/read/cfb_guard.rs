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

/// Checks the container; `Err` says what is wrong in plain words.
pub fn check(bytes: &[u8]) -> Result<(), String> {
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
    if n_fat > sectors {
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
    let mut streams: Vec<(u32, u64)> = Vec::new();
    for &d in &dir {
        let s = cfb.sector_bytes(d)?;
        for e in 0..sector / 128 {
            let base = e * 128;
            let kind = s[base + 0x42];
            let start = u32_at(s, base + 0x74).unwrap_or(END_OF_CHAIN);
            let size_lo = u32_at(s, base + 0x78).unwrap_or(0) as u64;
            let size_hi = u32_at(s, base + 0x7C).unwrap_or(0) as u64;
            let size = if major >= 4 { size_lo | (size_hi << 32) } else { size_lo };
            match kind {
                5 => {
                    let root = cfb.chain(start, &fat, sectors, "small-block stream")?;
                    mini_stream_size = root.len() as u64 * sector as u64;
                    if size > mini_stream_size {
                        return Err("the small-block stream is longer than its sectors".into());
                    }
                }
                2 => streams.push((start, size)),
                _ => {}
            }
        }
    }
    let mini_sectors = (mini_stream_size / 64) as usize;
    for (start, size) in streams {
        if size < cutoff {
            let c = cfb.chain(start, &minifat, mini_sectors, "small stream")?;
            if (c.len() as u64) * 64 < size {
                return Err("a small stream is longer than its blocks".into());
            }
        } else {
            let c = cfb.chain(start, &fat, sectors, "stream")?;
            if (c.len() as u64) * (sector as u64) < size {
                return Err("a stream is longer than its sectors".into());
            }
        }
    }
    Ok(())
}
