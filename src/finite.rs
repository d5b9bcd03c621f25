//! A guard for exports: find every non-finite floating-point value (NaN, ±∞) inside any
//! serialisable value, with the path of the field that holds it.
//!
//! JSON has no NaN: `serde_json` writes a non-finite number as `null`, indistinguishable from an
//! absent optional value. Every JSON export of sleek runs [`non_finite_fields`] first, so a NaN
//! never reaches a file silently (common practice for numerical exports).

use serde::ser::{self, Serialize};
use std::fmt;

/// Where the non-finite values of `value` are: at most `limit` field paths such as
/// `levels[3].variance`, and the total count.
pub fn non_finite_fields<T: Serialize + ?Sized>(value: &T, limit: usize) -> (Vec<String>, usize) {
    let mut p = Probe {
        path: Vec::new(),
        found: Vec::new(),
        count: 0,
        limit,
    };
    // The probe itself never fails.
    let _ = value.serialize(&mut p);
    (p.found, p.count)
}

/// `Ok` when every floating-point value inside `value` is finite; otherwise a one-line message
/// naming `what`, the first fields concerned and how many there are.
pub fn ensure_finite<T: Serialize + ?Sized>(value: &T, what: &str) -> Result<(), String> {
    let (found, count) = non_finite_fields(value, 3);
    if count == 0 {
        return Ok(());
    }
    Err(format!(
        "{what}: {count} value{} not finite (NaN or infinite) at {}{}",
        if count == 1 { " is" } else { "s are" },
        found.join(", "),
        if count > found.len() { ", …" } else { "" }
    ))
}

struct Probe {
    path: Vec<String>,
    found: Vec<String>,
    count: usize,
    limit: usize,
}

impl Probe {
    fn float(&mut self, v: f64) {
        if !v.is_finite() {
            self.count += 1;
            if self.found.len() < self.limit {
                let mut s = String::new();
                for part in &self.path {
                    if part.starts_with('[') || s.is_empty() {
                        s.push_str(part);
                    } else {
                        s.push('.');
                        s.push_str(part);
                    }
                }
                if s.is_empty() {
                    s.push_str("(top level)");
                }
                self.found.push(s);
            }
        }
    }
}

#[derive(Debug)]
struct Never;

impl fmt::Display for Never {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str("probe")
    }
}

impl std::error::Error for Never {}

impl ser::Error for Never {
    fn custom<T: fmt::Display>(_: T) -> Self {
        Never
    }
}

/// A compound value being walked: pushes an index or a field name around each element.
struct Walk<'a> {
    probe: &'a mut Probe,
    next: usize,
}

impl Walk<'_> {
    fn element<T: Serialize + ?Sized>(&mut self, name: String, v: &T) -> Result<(), Never> {
        self.probe.path.push(name);
        let r = v.serialize(&mut *self.probe);
        self.probe.path.pop();
        r
    }
    fn indexed<T: Serialize + ?Sized>(&mut self, v: &T) -> Result<(), Never> {
        let name = format!("[{}]", self.next);
        self.next += 1;
        self.element(name, v)
    }
}

impl<'a> ser::Serializer for &'a mut Probe {
    type Ok = ();
    type Error = Never;
    type SerializeSeq = Walk<'a>;
    type SerializeTuple = Walk<'a>;
    type SerializeTupleStruct = Walk<'a>;
    type SerializeTupleVariant = Walk<'a>;
    type SerializeMap = Walk<'a>;
    type SerializeStruct = Walk<'a>;
    type SerializeStructVariant = Walk<'a>;

    fn serialize_bool(self, _: bool) -> Result<(), Never> {
        Ok(())
    }
    fn serialize_i8(self, _: i8) -> Result<(), Never> {
        Ok(())
    }
    fn serialize_i16(self, _: i16) -> Result<(), Never> {
        Ok(())
    }
    fn serialize_i32(self, _: i32) -> Result<(), Never> {
        Ok(())
    }
    fn serialize_i64(self, _: i64) -> Result<(), Never> {
        Ok(())
    }
    fn serialize_u8(self, _: u8) -> Result<(), Never> {
        Ok(())
    }
    fn serialize_u16(self, _: u16) -> Result<(), Never> {
        Ok(())
    }
    fn serialize_u32(self, _: u32) -> Result<(), Never> {
        Ok(())
    }
    fn serialize_u64(self, _: u64) -> Result<(), Never> {
        Ok(())
    }
    fn serialize_f32(self, v: f32) -> Result<(), Never> {
        self.float(f64::from(v));
        Ok(())
    }
    fn serialize_f64(self, v: f64) -> Result<(), Never> {
        self.float(v);
        Ok(())
    }
    fn serialize_char(self, _: char) -> Result<(), Never> {
        Ok(())
    }
    fn serialize_str(self, _: &str) -> Result<(), Never> {
        Ok(())
    }
    fn serialize_bytes(self, _: &[u8]) -> Result<(), Never> {
        Ok(())
    }
    fn serialize_none(self) -> Result<(), Never> {
        Ok(())
    }
    fn serialize_some<T: Serialize + ?Sized>(self, v: &T) -> Result<(), Never> {
        v.serialize(self)
    }
    fn serialize_unit(self) -> Result<(), Never> {
        Ok(())
    }
    fn serialize_unit_struct(self, _: &'static str) -> Result<(), Never> {
        Ok(())
    }
    fn serialize_unit_variant(self, _: &'static str, _: u32, _: &'static str) -> Result<(), Never> {
        Ok(())
    }
    fn serialize_newtype_struct<T: Serialize + ?Sized>(
        self,
        _: &'static str,
        v: &T,
    ) -> Result<(), Never> {
        v.serialize(self)
    }
    fn serialize_newtype_variant<T: Serialize + ?Sized>(
        self,
        _: &'static str,
        _: u32,
        variant: &'static str,
        v: &T,
    ) -> Result<(), Never> {
        Walk {
            probe: self,
            next: 0,
        }
        .element(variant.to_string(), v)
    }
    fn serialize_seq(self, _: Option<usize>) -> Result<Walk<'a>, Never> {
        Ok(Walk {
            probe: self,
            next: 0,
        })
    }
    fn serialize_tuple(self, _: usize) -> Result<Walk<'a>, Never> {
        self.serialize_seq(None)
    }
    fn serialize_tuple_struct(self, _: &'static str, _: usize) -> Result<Walk<'a>, Never> {
        self.serialize_seq(None)
    }
    fn serialize_tuple_variant(
        self,
        _: &'static str,
        _: u32,
        _: &'static str,
        _: usize,
    ) -> Result<Walk<'a>, Never> {
        self.serialize_seq(None)
    }
    fn serialize_map(self, _: Option<usize>) -> Result<Walk<'a>, Never> {
        self.serialize_seq(None)
    }
    fn serialize_struct(self, _: &'static str, _: usize) -> Result<Walk<'a>, Never> {
        self.serialize_seq(None)
    }
    fn serialize_struct_variant(
        self,
        _: &'static str,
        _: u32,
        _: &'static str,
        _: usize,
    ) -> Result<Walk<'a>, Never> {
        self.serialize_seq(None)
    }
}

impl ser::SerializeSeq for Walk<'_> {
    type Ok = ();
    type Error = Never;
    fn serialize_element<T: Serialize + ?Sized>(&mut self, v: &T) -> Result<(), Never> {
        self.indexed(v)
    }
    fn end(self) -> Result<(), Never> {
        Ok(())
    }
}

impl ser::SerializeTuple for Walk<'_> {
    type Ok = ();
    type Error = Never;
    fn serialize_element<T: Serialize + ?Sized>(&mut self, v: &T) -> Result<(), Never> {
        self.indexed(v)
    }
    fn end(self) -> Result<(), Never> {
        Ok(())
    }
}

impl ser::SerializeTupleStruct for Walk<'_> {
    type Ok = ();
    type Error = Never;
    fn serialize_field<T: Serialize + ?Sized>(&mut self, v: &T) -> Result<(), Never> {
        self.indexed(v)
    }
    fn end(self) -> Result<(), Never> {
        Ok(())
    }
}

impl ser::SerializeTupleVariant for Walk<'_> {
    type Ok = ();
    type Error = Never;
    fn serialize_field<T: Serialize + ?Sized>(&mut self, v: &T) -> Result<(), Never> {
        self.indexed(v)
    }
    fn end(self) -> Result<(), Never> {
        Ok(())
    }
}

impl ser::SerializeMap for Walk<'_> {
    type Ok = ();
    type Error = Never;
    fn serialize_key<T: Serialize + ?Sized>(&mut self, k: &T) -> Result<(), Never> {
        // Keys are names, not data; a float key is still checked.
        k.serialize(&mut *self.probe)
    }
    fn serialize_value<T: Serialize + ?Sized>(&mut self, v: &T) -> Result<(), Never> {
        self.indexed(v)
    }
    fn end(self) -> Result<(), Never> {
        Ok(())
    }
}

impl ser::SerializeStruct for Walk<'_> {
    type Ok = ();
    type Error = Never;
    fn serialize_field<T: Serialize + ?Sized>(
        &mut self,
        name: &'static str,
        v: &T,
    ) -> Result<(), Never> {
        self.element(name.to_string(), v)
    }
    fn end(self) -> Result<(), Never> {
        Ok(())
    }
}

impl ser::SerializeStructVariant for Walk<'_> {
    type Ok = ();
    type Error = Never;
    fn serialize_field<T: Serialize + ?Sized>(
        &mut self,
        name: &'static str,
        v: &T,
    ) -> Result<(), Never> {
        self.element(name.to_string(), v)
    }
    fn end(self) -> Result<(), Never> {
        Ok(())
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use serde::Serialize;

    #[derive(Serialize)]
    struct Inner {
        a: f64,
        b: Option<f64>,
    }

    #[derive(Serialize)]
    struct Outer {
        name: &'static str,
        rows: Vec<Inner>,
        pair: [f64; 2],
    }

    #[test]
    fn finds_every_non_finite_value_with_its_path() {
        let v = Outer {
            name: "x",
            rows: vec![
                Inner { a: 1.0, b: None },
                Inner {
                    a: f64::NAN,
                    b: Some(f64::INFINITY),
                },
            ],
            pair: [0.0, f64::NEG_INFINITY],
        };
        let (found, count) = non_finite_fields(&v, 10);
        assert_eq!(count, 3);
        assert_eq!(found, vec!["rows[1].a", "rows[1].b", "pair[1]"]);
        let msg = ensure_finite(&v, "radii.json").unwrap_err();
        assert!(
            msg.starts_with("radii.json: 3 values are not finite"),
            "{msg}"
        );
    }

    #[test]
    fn finite_values_and_absent_options_pass() {
        let v = Outer {
            name: "x",
            rows: vec![Inner { a: 1.0, b: None }],
            pair: [0.0, -1e308],
        };
        assert_eq!(non_finite_fields(&v, 10).1, 0);
        assert!(ensure_finite(&v, "f").is_ok());
        assert!(ensure_finite(&f64::NAN, "f")
            .unwrap_err()
            .contains("(top level)"));
    }
}
