//! The layout of relyard's JSON documents: readable and compact at once.
//!
//! The top level and the objects directly under it put one key per line; every
//! object or array nested inside a list (a study, a coefficient, a warning) is written
//! on a single line, as is every text in a list (a reference); lists of numbers
//! (`[0.71, 0.89]`) stay on one line. A document
//! with 100,000 studies is then 100,000 short lines rather than a million, which keeps
//! it fast to write and easy to read or diff.

use serde::Serialize;
use serde_json::ser::{CompactFormatter, Formatter};
use std::io::{self, Write};

/// Objects at this depth or shallower put one key per line (the top level is depth 1).
const KEY_PER_LINE_DEPTH: usize = 2;
/// Containers inside an array at this depth or shallower start on a line of their own.
const ITEM_PER_LINE_DEPTH: usize = 2;
/// Spaces per level of indentation.
const INDENT: &[u8] = b"  ";

#[derive(Debug, Clone, Copy)]
struct Frame {
    object: bool,
    /// Keys on lines of their own (objects) / items on lines of their own (arrays).
    broken: bool,
    /// The container has written at least one member.
    any: bool,
}

/// A serde_json formatter for the layout described in the module documentation.
#[derive(Debug, Default)]
pub struct LayeredFormatter {
    stack: Vec<Frame>,
    /// A space is owed before the next array item if it turns out to be a plain value.
    space_owed: bool,
}

impl LayeredFormatter {
    fn line<W: ?Sized + Write>(w: &mut W, depth: usize) -> io::Result<()> {
        w.write_all(b"\n")?;
        for _ in 0..depth {
            w.write_all(INDENT)?;
        }
        Ok(())
    }

    /// Before a plain value: pay a space owed after an array's comma.
    fn plain<W: ?Sized + Write>(&mut self, w: &mut W) -> io::Result<()> {
        if std::mem::take(&mut self.space_owed) {
            w.write_all(b" ")?;
        }
        Ok(())
    }

    /// Before a container: inside a shallow array it starts on a new line.
    fn container<W: ?Sized + Write>(&mut self, w: &mut W) -> io::Result<()> {
        let depth = self.stack.len();
        let owed = std::mem::take(&mut self.space_owed);
        match self.stack.last_mut() {
            Some(parent) if !parent.object && depth <= ITEM_PER_LINE_DEPTH => {
                parent.broken = true;
                Self::line(w, depth)
            }
            _ if owed => w.write_all(b" "),
            _ => Ok(()),
        }
    }
}

macro_rules! plain_values {
    ($($name:ident: $t:ty),* $(,)?) => {
        $(
            fn $name<W: ?Sized + Write>(&mut self, w: &mut W, value: $t) -> io::Result<()> {
                self.plain(w)?;
                CompactFormatter.$name(w, value)
            }
        )*
    };
}

impl Formatter for LayeredFormatter {
    plain_values!(
        write_bool: bool, write_i8: i8, write_i16: i16, write_i32: i32, write_i64: i64,
        write_i128: i128, write_u8: u8, write_u16: u16, write_u32: u32, write_u64: u64,
        write_u128: u128, write_f32: f32, write_f64: f64, write_number_str: &str,
    );

    fn write_null<W: ?Sized + Write>(&mut self, w: &mut W) -> io::Result<()> {
        self.plain(w)?;
        w.write_all(b"null")
    }

    fn begin_string<W: ?Sized + Write>(&mut self, w: &mut W) -> io::Result<()> {
        // Texts in a shallow list (references, notes) take a line each, like records.
        let in_object = self.stack.last().is_none_or(|f| f.object);
        if in_object {
            self.plain(w)?;
        } else {
            self.container(w)?;
        }
        w.write_all(b"\"")
    }

    fn begin_array<W: ?Sized + Write>(&mut self, w: &mut W) -> io::Result<()> {
        self.container(w)?;
        self.stack.push(Frame {
            object: false,
            broken: false,
            any: false,
        });
        w.write_all(b"[")
    }

    fn end_array<W: ?Sized + Write>(&mut self, w: &mut W) -> io::Result<()> {
        self.space_owed = false;
        let frame = self.stack.pop().unwrap_or(Frame {
            object: false,
            broken: false,
            any: false,
        });
        if frame.broken {
            Self::line(w, self.stack.len())?;
        }
        w.write_all(b"]")
    }

    fn begin_array_value<W: ?Sized + Write>(&mut self, w: &mut W, first: bool) -> io::Result<()> {
        if !first {
            w.write_all(b",")?;
            self.space_owed = true;
        }
        Ok(())
    }

    fn end_array_value<W: ?Sized + Write>(&mut self, _w: &mut W) -> io::Result<()> {
        if let Some(f) = self.stack.last_mut() {
            f.any = true;
        }
        Ok(())
    }

    fn begin_object<W: ?Sized + Write>(&mut self, w: &mut W) -> io::Result<()> {
        self.container(w)?;
        let depth = self.stack.len() + 1;
        self.stack.push(Frame {
            object: true,
            broken: depth <= KEY_PER_LINE_DEPTH,
            any: false,
        });
        w.write_all(b"{")
    }

    fn end_object<W: ?Sized + Write>(&mut self, w: &mut W) -> io::Result<()> {
        let frame = self.stack.pop().unwrap_or(Frame {
            object: true,
            broken: false,
            any: false,
        });
        if frame.broken && frame.any {
            Self::line(w, self.stack.len())?;
        }
        w.write_all(b"}")
    }

    fn begin_object_key<W: ?Sized + Write>(&mut self, w: &mut W, first: bool) -> io::Result<()> {
        if !first {
            w.write_all(b",")?;
        }
        let depth = self.stack.len();
        match self.stack.last_mut() {
            Some(f) if f.broken => {
                f.any = true;
                Self::line(w, depth)
            }
            Some(f) => {
                f.any = true;
                if first { Ok(()) } else { w.write_all(b" ") }
            }
            None => Ok(()),
        }
    }

    fn begin_object_value<W: ?Sized + Write>(&mut self, w: &mut W) -> io::Result<()> {
        // The value follows ": " directly, containers included.
        w.write_all(b": ")
    }
}

/// Write `value` as a JSON document in relyard's layout, with a final newline.
pub fn write_json<W: Write, T: Serialize + ?Sized>(mut w: W, value: &T) -> io::Result<()> {
    let mut ser = serde_json::Serializer::with_formatter(&mut w, LayeredFormatter::default());
    value.serialize(&mut ser).map_err(io::Error::from)?;
    w.write_all(b"\n")?;
    w.flush()
}

/// `value` as a JSON document in relyard's layout, with a final newline.
pub fn to_json_string<T: Serialize + ?Sized>(value: &T) -> String {
    let mut out = Vec::new();
    // Writing to memory cannot fail, and serialising relyard's documents cannot either
    // (string keys only, finite numbers or null).
    write_json(&mut out, value).expect("JSON serialisation to memory");
    String::from_utf8(out).expect("serde_json writes UTF-8")
}

#[cfg(test)]
mod tests {
    use super::*;
    use serde_json::json;

    /// The layout changes whitespace only: serde_json reads back the same value.
    #[test]
    fn round_trips_through_serde_json() {
        let v = json!({
            "k": 3,
            "ci": [0.71, 0.89],
            "empty_list": [],
            "empty_object": {},
            "reliability": {"estimate": 0.8, "ci": [0.7, 0.9], "nested": {"a": [1, {"b": null}]}},
            "studies": [
                {"row": 2, "study": "a \"quoted\" label", "weights": [1.5, 2]},
                {"row": 3, "study": "b", "weights": []}
            ],
            "matrix": [[1.0, 0.5], [0.5, 1.0]],
            "flags": [true, false, null, "x"]
        });
        let text = to_json_string(&v);
        let back: serde_json::Value = serde_json::from_str(&text).unwrap();
        assert_eq!(back, v);
        assert!(text.ends_with("}\n"));
    }

    #[test]
    fn lists_of_records_take_one_line_each() {
        let v = json!({
            "ci": [0.71, 0.89],
            "studies": [{"row": 2, "study": "a"}, {"row": 3, "study": "b"}],
            "reliability": {"estimate": 0.8}
        });
        let text = to_json_string(&v);
        let lines: Vec<&str> = text.lines().collect();
        assert!(lines.contains(&"  \"ci\": [0.71, 0.89],"), "{text}");
        assert!(
            lines.contains(&"    {\"row\": 2, \"study\": \"a\"},"),
            "{text}"
        );
        assert!(
            lines.contains(&"    {\"row\": 3, \"study\": \"b\"}"),
            "{text}"
        );
        assert!(lines.contains(&"    \"estimate\": 0.8"), "{text}");
        assert_eq!(lines.first(), Some(&"{"));
        let refs = to_json_string(&json!({"references": ["A (2001).", "B (2002)."], "at": [1, 2]}));
        assert!(
            refs.contains("\n    \"A (2001).\",\n    \"B (2002).\"\n  ]"),
            "{refs}"
        );
        assert!(refs.contains("\"at\": [1, 2]"), "{refs}");
        assert_eq!(lines.last(), Some(&"}"));
    }
}
