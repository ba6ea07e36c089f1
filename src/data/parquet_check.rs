//! A check of a Parquet file's page headers before it is handed to polars: a damaged
//! header with a negative value count makes the decoder ask for an impossible amount of
//! memory, and that allocation failure ends the process instead of returning an error.
//!
//! The footer (`FileMetaData`) and each page header are read with a small decoder of the
//! Thrift compact protocol (the encoding the Apache Parquet format specifies for its
//! metadata); only the fields needed here are looked at: each column chunk's value count
//! and byte range, and each page's sizes and value count.

/// A decoded Thrift value: integers (any width), binary, a struct's fields, a list.
#[derive(Debug)]
enum Value {
    Int(i64),
    Other,
    Struct(Vec<(i16, Value)>),
    List(Vec<Value>),
}

impl Value {
    fn field(&self, id: i16) -> Option<&Value> {
        match self {
            Value::Struct(fields) => fields.iter().find(|(f, _)| *f == id).map(|(_, v)| v),
            _ => None,
        }
    }

    fn int(&self, id: i16) -> Option<i64> {
        match self.field(id) {
            Some(Value::Int(v)) => Some(*v),
            _ => None,
        }
    }
}

/// Deepest nesting accepted (Parquet metadata nests about six levels).
const MAX_DEPTH: usize = 32;

/// Reader of the Thrift compact protocol over a byte slice.
struct Compact<'a> {
    bytes: &'a [u8],
    pos: usize,
}

impl Compact<'_> {
    fn byte(&mut self) -> Result<u8, String> {
        let b = *self.bytes.get(self.pos).ok_or("metadata ends early")?;
        self.pos += 1;
        Ok(b)
    }

    fn varint(&mut self) -> Result<u64, String> {
        let mut v = 0u64;
        for shift in (0..70).step_by(7) {
            let b = self.byte()?;
            v |= u64::from(b & 0x7f).checked_shl(shift).unwrap_or(0);
            if b & 0x80 == 0 {
                return Ok(v);
            }
        }
        Err("malformed varint in the metadata".into())
    }

    fn zigzag(&mut self) -> Result<i64, String> {
        let v = self.varint()?;
        Ok((v >> 1) as i64 ^ -((v & 1) as i64))
    }

    fn skip(&mut self, n: u64) -> Result<(), String> {
        let end = usize::try_from(n)
            .ok()
            .and_then(|n| self.pos.checked_add(n))
            .filter(|&e| e <= self.bytes.len())
            .ok_or("metadata ends early")?;
        self.pos = end;
        Ok(())
    }

    /// A value of compact type `t`.
    fn value(&mut self, t: u8, depth: usize) -> Result<Value, String> {
        if depth > MAX_DEPTH {
            return Err("metadata nested too deeply".into());
        }
        Ok(match t {
            1 | 2 => Value::Int(i64::from(t == 1)),
            3 => Value::Int(i64::from(self.byte()? as i8)),
            4..=6 => Value::Int(self.zigzag()?),
            7 => {
                self.skip(8)?;
                Value::Other
            }
            8 => {
                let n = self.varint()?;
                self.skip(n)?;
                Value::Other
            }
            9 | 10 => {
                let head = self.byte()?;
                let n = match head >> 4 {
                    15 => self.varint()?,
                    n => u64::from(n),
                };
                // Each element takes at least one byte: a longer count is damage.
                if n > (self.bytes.len() - self.pos) as u64 {
                    return Err("list longer than the metadata".into());
                }
                let mut items = Vec::new();
                for _ in 0..n {
                    items.push(self.value(head & 0x0f, depth + 1)?);
                }
                Value::List(items)
            }
            11 => {
                let n = self.varint()?;
                if n > 0 {
                    let kv = self.byte()?;
                    for _ in 0..n {
                        self.value(kv >> 4, depth + 1)?;
                        self.value(kv & 0x0f, depth + 1)?;
                    }
                }
                Value::Other
            }
            12 => self.structure(depth + 1)?,
            _ => return Err(format!("unknown Thrift type {t} in the metadata")),
        })
    }

    fn structure(&mut self, depth: usize) -> Result<Value, String> {
        let mut fields = Vec::new();
        let mut id: i16 = 0;
        loop {
            let head = self.byte()?;
            if head == 0 {
                return Ok(Value::Struct(fields));
            }
            id = match head >> 4 {
                0 => i16::try_from(self.zigzag()?).map_err(|_| "bad field id in the metadata")?,
                delta => id.wrapping_add(i16::from(delta)),
            };
            let v = self.value(head & 0x0f, depth)?;
            fields.push((id, v));
        }
    }
}

/// Checks the page headers of the Parquet file `bytes`.
///
/// # Errors
/// What is damaged: a footer or page header that cannot be decoded, a byte range outside
/// the file, or a negative or excessive size or value count.
pub(crate) fn check(bytes: &[u8]) -> Result<(), String> {
    let n = bytes.len();
    if n < 12 || &bytes[..4] != b"PAR1" || &bytes[n - 4..] != b"PAR1" {
        return Err("not a Parquet file (no PAR1 marks at both ends)".into());
    }
    let footer_len = u32::from_le_bytes([bytes[n - 8], bytes[n - 7], bytes[n - 6], bytes[n - 5]]);
    let footer_start = (n - 8)
        .checked_sub(footer_len as usize)
        .filter(|&s| s >= 4)
        .ok_or("footer length larger than the file")?;
    let meta = Compact {
        bytes: &bytes[footer_start..n - 8],
        pos: 0,
    }
    .structure(0)?;
    let file_rows = meta.int(3).ok_or("no row count in the footer")?;
    if file_rows < 0 {
        return Err(format!("negative row count {file_rows} in the footer"));
    }
    let Some(Value::List(groups)) = meta.field(4) else {
        return Err("no row groups in the footer".into());
    };
    for group in groups {
        let Some(Value::List(columns)) = group.field(1) else {
            return Err("a row group without columns".into());
        };
        for column in columns {
            let cm = column.field(3).ok_or("a column chunk without metadata")?;
            check_chunk(bytes, footer_start, cm, file_rows)?;
        }
    }
    Ok(())
}

/// Walks the pages of one column chunk (`ColumnMetaData` `cm`).
fn check_chunk(bytes: &[u8], end: usize, cm: &Value, file_rows: i64) -> Result<(), String> {
    let values = cm.int(5).ok_or("a column chunk without a value count")?;
    let size = cm.int(7).ok_or("a column chunk without a size")?;
    let start = cm.int(11).filter(|&d| d > 0).or(cm.int(9));
    let start = start.ok_or("a column chunk without a data offset")?;
    if values < 0 || values > file_rows.max(0).saturating_mul(1 << 20) {
        return Err(format!("column chunk value count {values} out of range"));
    }
    let stop = start
        .checked_add(size)
        .filter(|&s| start >= 4 && size >= 0 && s <= end as i64);
    let stop = stop.ok_or("a column chunk lies outside the file")? as usize;
    let mut pos = start as usize;
    while pos < stop {
        let mut reader = Compact {
            bytes: &bytes[pos..stop],
            pos: 0,
        };
        let header = reader.structure(0)?;
        let compressed = header.int(3).ok_or("a page header without its size")?;
        let uncompressed = header.int(2).ok_or("a page header without its size")?;
        if compressed < 0 || uncompressed < 0 {
            return Err(format!("negative page size {compressed}/{uncompressed}"));
        }
        // Data page (5), dictionary page (7), data page v2 (8): field 1 is num_values.
        for id in [5, 7, 8] {
            if let Some(count) = header.field(id).and_then(|h| h.int(1))
                && !(0..=values.max(0)).contains(&count)
            {
                return Err(format!(
                    "page value count {count} out of range (the column holds {values})"
                ));
            }
        }
        pos = pos
            .checked_add(reader.pos)
            .and_then(|p| p.checked_add(compressed as usize))
            .ok_or("page sizes overflow")?;
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A file of `footer` bytes as the footer, with the PAR1 marks and length.
    fn file(footer: &[u8]) -> Vec<u8> {
        let mut b = b"PAR1".to_vec();
        b.extend_from_slice(footer);
        b.extend_from_slice(&(footer.len() as u32).to_le_bytes());
        b.extend_from_slice(b"PAR1");
        b
    }

    #[test]
    fn damaged_footers_are_errors() {
        assert!(check(b"PAR1PAR1").unwrap_err().contains("PAR1"));
        // Footer length beyond the file.
        let mut f = file(&[0]);
        let n = f.len();
        f[n - 8] = 0xff;
        assert!(check(&f).unwrap_err().contains("footer length"));
        // An empty struct: no row count.
        assert!(check(&file(&[0])).unwrap_err().contains("row count"));
        // Field 3 (i64, compact type 6) = -1 by zigzag, then stop.
        assert!(
            check(&file(&[0x36, 0x01, 0]))
                .unwrap_err()
                .contains("negative")
        );
        // Nested structs beyond the depth limit.
        let deep: Vec<u8> = std::iter::repeat_n(0x1c, 40).collect();
        assert!(check(&file(&deep)).unwrap_err().contains("nested"));
        // A list claiming more elements than there are bytes.
        assert!(
            check(&file(&[0x19, 0xf5, 0xff, 0xff, 0x03]))
                .unwrap_err()
                .contains("list")
        );
    }

    #[test]
    fn the_row_group_list_is_required() {
        // num_rows = 5 (zigzag 10), row_groups = empty list of structs.
        assert!(check(&file(&[0x36, 0x0a, 0x19, 0x0c, 0])).is_ok());
        assert!(
            check(&file(&[0x36, 0x0a, 0]))
                .unwrap_err()
                .contains("row groups")
        );
    }
}
