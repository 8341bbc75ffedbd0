//! Text held compactly: many short strings in one buffer ([`Strings`]), and text columns as
//! codes into their distinct values ([`TextColumn`]). A million part ids are then two
//! allocations, not a million.

use rustc_hash::FxHashMap;

/// Many strings in one buffer, addressed by index.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct Strings {
    buf: String,
    /// End of each string in `buf`; string i is `buf[ends[i-1]..ends[i]]`.
    ends: Vec<usize>,
}

impl Strings {
    pub fn push(&mut self, s: &str) {
        self.buf.push_str(s);
        self.ends.push(self.buf.len());
    }

    pub fn len(&self) -> usize {
        self.ends.len()
    }

    pub fn is_empty(&self) -> bool {
        self.ends.is_empty()
    }

    pub fn get(&self, i: usize) -> Option<&str> {
        let end = *self.ends.get(i)?;
        let start = if i == 0 { 0 } else { self.ends[i - 1] };
        Some(&self.buf[start..end])
    }

    /// Pads with empty strings up to `len` entries.
    pub fn pad_to(&mut self, len: usize) {
        let end = self.buf.len();
        if self.ends.len() < len {
            self.ends.resize(len, end);
        }
    }

    /// Appends all of `other`, consuming it.
    pub fn append(&mut self, other: Strings) {
        if self.is_empty() {
            *self = other;
            return;
        }
        let offset = self.buf.len();
        self.buf.push_str(&other.buf);
        self.ends.extend(other.ends.iter().map(|e| e + offset));
    }

    pub fn iter(&self) -> impl Iterator<Item = &str> {
        (0..self.len()).map(|i| self.get(i).unwrap_or_default())
    }
}

/// Distinct texts by code, with a lookup from text to code.
#[derive(Debug, Clone, Default)]
pub struct Dictionary {
    pub levels: Vec<String>,
    index: FxHashMap<Box<[u8]>, u32>,
}

impl Dictionary {
    /// The code of `text`, added when new.
    pub fn code(&mut self, text: &str) -> u32 {
        self.code_bytes(text.as_bytes())
    }

    /// The code of a cell's bytes (valid UTF-8 in practice; replaced where not).
    pub fn code_bytes(&mut self, text: &[u8]) -> u32 {
        if let Some(&c) = self.index.get(text) {
            return c;
        }
        let c = self.levels.len() as u32;
        self.levels.push(String::from_utf8_lossy(text).into_owned());
        self.index.insert(text.into(), c);
        c
    }

    pub fn get(&self, code: u32) -> &str {
        &self.levels[code as usize]
    }

    pub fn len(&self) -> usize {
        self.levels.len()
    }

    pub fn is_empty(&self) -> bool {
        self.levels.is_empty()
    }
}

/// A text column, dictionary-encoded: one code per row, [`NO_LEVEL`] where the cell is absent.
#[derive(Debug, Clone, Default)]
pub struct TextColumn {
    pub name: String,
    pub levels: Vec<String>,
    pub codes: Vec<u32>,
    index: FxHashMap<String, u32>,
}

pub const NO_LEVEL: u32 = u32::MAX;

impl TextColumn {
    pub fn new(name: &str) -> Self {
        Self {
            name: name.to_string(),
            ..Default::default()
        }
    }

    /// The code of `text` in this column, added as a level when new.
    pub fn intern(&mut self, text: &str) -> u32 {
        if let Some(&c) = self.index.get(text) {
            return c;
        }
        let c = self.levels.len() as u32;
        self.levels.push(text.to_string());
        self.index.insert(text.to_string(), c);
        c
    }

    pub fn push(&mut self, text: Option<&str>) {
        let code = text.map_or(NO_LEVEL, |t| self.intern(t));
        self.codes.push(code);
    }

    pub fn pad_to(&mut self, rows: usize) {
        self.codes.resize(rows, NO_LEVEL);
    }

    pub fn get(&self, row: usize) -> Option<&str> {
        match self.codes.get(row) {
            Some(&c) if c != NO_LEVEL => Some(&self.levels[c as usize]),
            _ => None,
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn strings_append_and_pad_keep_every_entry() {
        let mut a = Strings::default();
        a.push("P1");
        a.push("");
        let mut b = Strings::default();
        b.push("Q7");
        a.append(b);
        a.pad_to(5);
        let all: Vec<&str> = a.iter().collect();
        assert_eq!(all, ["P1", "", "Q7", "", ""]);
        assert_eq!(a.get(5), None);
    }

    #[test]
    fn dictionary_codes_are_stable() {
        let mut d = Dictionary::default();
        assert_eq!(d.code("L1"), 0);
        assert_eq!(d.code("L2"), 1);
        assert_eq!(d.code("L1"), 0);
        assert_eq!(d.get(1), "L2");
    }
}
