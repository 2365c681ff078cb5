//! Reading a wasm module's exports, to check that an optimiser kept them: each
//! export's name, kind and, for tables, element type. Some binaryen releases
//! (Debian 12 ships version 108) rewrite a module with two tables so that the
//! exported externref table points at the funcref table; the page would then
//! fail at start-up. The binary format read here is the WebAssembly Core
//! Specification's, section 5 (Binary Format).

/// One export: name, kind (0 function, 1 table, 2 memory, 3 global, 4 tag),
/// and for a table its element type byte (0x70 funcref, 0x6F externref).
#[derive(Debug, Clone, PartialEq, Eq, PartialOrd, Ord)]
pub struct Export {
    /// Export name.
    pub name: String,
    /// External kind byte.
    pub kind: u8,
    /// Element type of an exported table.
    pub table_type: Option<u8>,
}

/// The exports of a module, sorted by name; `None` if the bytes are not a
/// module this reader understands.
pub fn exports(wasm: &[u8]) -> Option<Vec<Export>> {
    let mut r = Reader { bytes: wasm, at: 0 };
    if r.take(4)? != b"\0asm" || r.take(4)? != [1, 0, 0, 0] {
        return None;
    }
    let mut tables: Vec<u8> = Vec::new();
    let mut raw_exports: Vec<(String, u8, u32)> = Vec::new();
    while r.at < r.bytes.len() {
        let id = r.byte()?;
        let size = r.leb()? as usize;
        let body = r.take(size)?;
        let mut s = Reader { bytes: body, at: 0 };
        match id {
            2 => {
                for _ in 0..s.leb()? {
                    s.name()?;
                    s.name()?;
                    match s.byte()? {
                        0 => {
                            s.leb()?;
                        }
                        1 => {
                            tables.push(s.byte()?);
                            s.limits()?;
                        }
                        2 => s.limits()?,
                        3 => {
                            s.byte()?;
                            s.byte()?;
                        }
                        4 => {
                            s.byte()?;
                            s.leb()?;
                        }
                        _ => return None,
                    }
                }
            }
            4 => {
                for _ in 0..s.leb()? {
                    tables.push(s.byte()?);
                    s.limits()?;
                }
            }
            7 => {
                for _ in 0..s.leb()? {
                    let name = s.name()?;
                    let kind = s.byte()?;
                    let index = s.leb()?;
                    raw_exports.push((name, kind, index));
                }
            }
            _ => {}
        }
    }
    let mut out: Vec<Export> = raw_exports
        .into_iter()
        .map(|(name, kind, index)| Export {
            table_type: (kind == 1)
                .then(|| tables.get(index as usize).copied())
                .flatten(),
            name,
            kind,
        })
        .collect();
    out.sort();
    Some(out)
}

struct Reader<'a> {
    bytes: &'a [u8],
    at: usize,
}

impl<'a> Reader<'a> {
    fn take(&mut self, n: usize) -> Option<&'a [u8]> {
        let end = self.at.checked_add(n)?;
        let slice = self.bytes.get(self.at..end)?;
        self.at = end;
        Some(slice)
    }
    fn byte(&mut self) -> Option<u8> {
        self.take(1).map(|b| b[0])
    }
    /// Unsigned LEB128 (at most 64 bits).
    fn leb(&mut self) -> Option<u32> {
        let mut value: u64 = 0;
        for shift in (0..64).step_by(7) {
            let b = self.byte()?;
            value |= u64::from(b & 0x7f) << shift;
            if b & 0x80 == 0 {
                return Some(value as u32);
            }
        }
        None
    }
    fn name(&mut self) -> Option<String> {
        let len = self.leb()? as usize;
        Some(String::from_utf8_lossy(self.take(len)?).into_owned())
    }
    fn limits(&mut self) -> Option<()> {
        let flags = self.byte()?;
        self.leb()?;
        if flags & 1 == 1 {
            self.leb()?;
        }
        Some(())
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A hand-assembled module (Core Specification, section 5): one imported
    /// function, a funcref table and an externref table, exporting the
    /// externref table as "refs" and the imported function as "f".
    fn module(export_table_index: u8) -> Vec<u8> {
        let mut m = b"\0asm\x01\0\0\0".to_vec();
        // type section: one type, () -> ()
        m.extend([1, 4, 1, 0x60, 0, 0]);
        // import section: "m" "g" func type 0
        m.extend([2, 7, 1, 1, b'm', 1, b'g', 0, 0]);
        // table section: funcref min 1; externref min 2 max 9
        m.extend([4, 8, 2, 0x70, 0, 1, 0x6f, 1, 2, 9]);
        // export section: "refs" table i, "f" func 0
        m.extend([
            7,
            12,
            2,
            4,
            b'r',
            b'e',
            b'f',
            b's',
            1,
            export_table_index,
            1,
            b'f',
            0,
            0,
        ]);
        m
    }

    #[test]
    fn reads_export_kinds_and_table_types() {
        let got = exports(&module(1)).expect("valid module");
        assert_eq!(
            got,
            [
                Export {
                    name: "f".into(),
                    kind: 0,
                    table_type: None
                },
                Export {
                    name: "refs".into(),
                    kind: 1,
                    table_type: Some(0x6f)
                },
            ]
        );
        // The damage seen from an old optimiser: the same export, now
        // pointing at the funcref table, compares unequal.
        assert_ne!(exports(&module(0)), Some(got));
    }

    #[test]
    fn refuses_what_is_not_a_module() {
        assert_eq!(exports(b"not wasm"), None);
        let mut cut = module(1);
        cut.truncate(cut.len() - 3);
        assert_eq!(exports(&cut), None);
    }
}
