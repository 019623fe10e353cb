//! The exchange structure of ISO 10303-21 (STEP physical file): entity
//! instances `#n=IFCNAME(...);` with their attribute values, and the IFC
//! compressed form of globally unique identifiers.
//!
//! Written here rather than taken from a crate: the file needs a few dozen
//! entity instances with full-precision reals and stable numbering, which is
//! a small amount of code, and it keeps the output byte-identical for the
//! same input (a requirement of every chordline output).
//!
//! ## References
//! * ISO 10303-21:2016, clauses 6.4 (encoding of simple data types: reals
//!   always carry a decimal point, strings use `''` for an apostrophe and
//!   `\X2\…\X0\` for characters outside basic ASCII) and 12 (instances).
//! * IFC 4.3 (ISO 16739-1:2024), `IfcGloballyUniqueId`: 128 bits written as
//!   22 characters of the alphabet `0-9A-Za-z_$`, the first one holding the
//!   top 2 bits.

use std::fmt::Write as _;

/// Reference to an entity instance (`#n`).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Id(pub usize);

/// One attribute value.
#[derive(Debug, Clone, PartialEq)]
pub enum V {
    /// `$`: an optional attribute left out.
    Null,
    /// `*`: an attribute redeclared as derived in a subtype.
    Derived,
    /// `#n`.
    Ref(Id),
    /// A real number (always written with a decimal point).
    Real(f64),
    /// An integer.
    Int(i64),
    /// A string.
    Str(String),
    /// An enumeration value, written `.NAME.`.
    Enum(&'static str),
    /// A boolean, written `.T.` or `.F.`.
    Bool(bool),
    /// An aggregate `( … )`.
    List(Vec<V>),
    /// A typed value of a select, e.g. `IFCLENGTHMEASURE(12.5)`.
    Typed(&'static str, Box<V>),
}

impl V {
    /// A string value.
    pub fn s(text: impl Into<String>) -> V {
        V::Str(text.into())
    }

    /// A list of references.
    pub fn refs(ids: &[Id]) -> V {
        V::List(ids.iter().map(|&i| V::Ref(i)).collect())
    }

    /// A list of reals.
    pub fn reals(xs: &[f64]) -> V {
        V::List(xs.iter().map(|&x| V::Real(x)).collect())
    }

    /// A typed real, e.g. `IFCLENGTHMEASURE(x)`.
    pub fn typed(name: &'static str, x: f64) -> V {
        V::Typed(name, Box::new(V::Real(x)))
    }
}

/// The shortest decimal text that reads back as the same `f64`, in the
/// STEP form: a decimal point always, an upper-case exponent, no `-0`.
/// `None` for a value that is not finite.
pub fn real_text(x: f64) -> Option<String> {
    if !x.is_finite() {
        return None;
    }
    if x == 0.0 {
        return Some("0.".to_string());
    }
    // `{:e}` is the shortest round-trip form in scientific notation; switch
    // to the plain form for ordinary magnitudes so that files read easily.
    let plain = (1e-4..1e15).contains(&x.abs());
    let text = if plain {
        let mut t = format!("{x}");
        if !t.contains('.') {
            t.push('.');
        }
        t
    } else {
        let t = format!("{x:e}");
        let (mant, exp) = t.split_once('e').unwrap_or((&t, "0"));
        let mant = if mant.contains('.') {
            mant.to_string()
        } else {
            format!("{mant}.")
        };
        format!("{mant}E{exp}")
    };
    Some(text)
}

/// A STEP string literal with its quotes.
pub fn string_text(s: &str) -> String {
    let mut out = String::with_capacity(s.len() + 2);
    out.push('\'');
    for ch in s.chars() {
        match ch {
            '\'' => out.push_str("''"),
            '\\' => out.push_str("\\\\"),
            ' '..='~' => out.push(ch),
            _ => {
                let mut units = [0u16; 2];
                out.push_str("\\X2\\");
                for u in ch.encode_utf16(&mut units) {
                    let _ = write!(out, "{u:04X}");
                }
                out.push_str("\\X0\\");
            }
        }
    }
    out.push('\'');
    out
}

/// The instances of the DATA section, numbered from 1 in the order added.
#[derive(Debug, Default)]
pub struct Data {
    lines: Vec<String>,
    /// The first entity in which a number was not finite.
    bad: Option<String>,
}

impl Data {
    /// Add an instance of `entity` (upper case, e.g. `IFCLINE`) and return its reference.
    pub fn add(&mut self, entity: &str, args: &[V]) -> Id {
        let id = Id(self.lines.len() + 1);
        let mut line = format!("#{}={entity}(", id.0);
        for (i, a) in args.iter().enumerate() {
            if i > 0 {
                line.push(',');
            }
            self.value(&mut line, a, entity);
        }
        line.push_str(");");
        self.lines.push(line);
        id
    }

    fn value(&mut self, out: &mut String, v: &V, entity: &str) {
        match v {
            V::Null => out.push('$'),
            V::Derived => out.push('*'),
            V::Ref(Id(n)) => {
                let _ = write!(out, "#{n}");
            }
            V::Real(x) => match real_text(*x) {
                Some(t) => out.push_str(&t),
                None => {
                    self.bad.get_or_insert_with(|| entity.to_string());
                    out.push('$');
                }
            },
            V::Int(i) => {
                let _ = write!(out, "{i}");
            }
            V::Str(s) => out.push_str(&string_text(s)),
            V::Enum(e) => {
                let _ = write!(out, ".{e}.");
            }
            V::Bool(b) => out.push_str(if *b { ".T." } else { ".F." }),
            V::List(items) => {
                out.push('(');
                for (i, item) in items.iter().enumerate() {
                    if i > 0 {
                        out.push(',');
                    }
                    self.value(out, item, entity);
                }
                out.push(')');
            }
            V::Typed(name, inner) => {
                out.push_str(name);
                out.push('(');
                self.value(out, inner, entity);
                out.push(')');
            }
        }
    }

    /// The entity in which a number was not finite, if any.
    pub fn not_finite(&self) -> Option<&str> {
        self.bad.as_deref()
    }

    /// The whole exchange structure: header (description, file name with
    /// its time stamp, schema) and the DATA section.
    pub fn file_text(&self, header: &Header) -> String {
        let mut t = String::new();
        t.push_str("ISO-10303-21;\nHEADER;\n");
        let _ = writeln!(
            t,
            "FILE_DESCRIPTION(({}),'2;1');",
            string_text(&header.view)
        );
        let _ = writeln!(
            t,
            "FILE_NAME({},{},({}),({}),{},{},'');",
            string_text(&header.name),
            string_text(&header.time_stamp),
            string_text(""),
            string_text(""),
            string_text(&header.preprocessor),
            string_text(&header.originating_system),
        );
        let _ = writeln!(t, "FILE_SCHEMA(({}));", string_text(&header.schema));
        t.push_str("ENDSEC;\nDATA;\n");
        for l in &self.lines {
            t.push_str(l);
            t.push('\n');
        }
        t.push_str("ENDSEC;\nEND-ISO-10303-21;\n");
        t
    }
}

/// The HEADER section's values.
#[derive(Debug, Clone)]
pub struct Header {
    /// The view definition, e.g. `ViewDefinition [Alignment-basedView]`.
    pub view: String,
    /// File name.
    pub name: String,
    /// ISO 8601 time stamp.
    pub time_stamp: String,
    /// Program that wrote the file.
    pub preprocessor: String,
    /// Program whose data it is.
    pub originating_system: String,
    /// Schema identifier, e.g. `IFC4X3_ADD2`.
    pub schema: String,
}

const GUID_CHARS: &[u8; 64] = b"0123456789ABCDEFGHIJKLMNOPQRSTUVWXYZabcdefghijklmnopqrstuvwxyz_$";

/// A 128-bit number in the 22-character IFC form.
pub fn guid_text(n: u128) -> String {
    let mut out = [0u8; 22];
    out[0] = GUID_CHARS[(n >> 126) as usize];
    for (i, slot) in out[1..].iter_mut().rev().enumerate() {
        *slot = GUID_CHARS[((n >> (6 * i)) & 63) as usize];
    }
    out.iter().map(|&b| b as char).collect()
}

/// FNV-1a, 128-bit (Fowler, Noll, Vo; parameters from the public FNV
/// description): a fixed, well-mixed hash for deterministic identifiers.
pub fn fnv1a_128(bytes: &[u8]) -> u128 {
    const OFFSET: u128 = 0x6c62_272e_07bb_0142_62b8_2175_6295_c58d;
    const PRIME: u128 = 0x0000_0000_0100_0000_0000_0000_0000_013b;
    bytes
        .iter()
        .fold(OFFSET, |h, &b| (h ^ u128::from(b)).wrapping_mul(PRIME))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn reals_round_trip_and_carry_a_point() {
        for x in [
            0.0,
            -0.0,
            1.0,
            -2.5,
            0.1,
            1.0 / 3.0,
            123_456.789_012_345_6,
            6.02e23,
            -1.5e-9,
            5e-324,
        ] {
            let t = real_text(x).unwrap();
            assert!(t.contains('.'), "{t}");
            assert!(!t.contains('e'), "{t}");
            assert_eq!(t.replace(".E", ".0E").parse::<f64>().unwrap(), x, "{t}");
        }
        assert_eq!(real_text(-0.0).unwrap(), "0.");
        assert_eq!(real_text(1.0).unwrap(), "1.");
        assert_eq!(real_text(1e-9).unwrap(), "1.E-9");
        assert_eq!(real_text(f64::NAN), None);
    }

    #[test]
    fn strings_are_escaped() {
        assert_eq!(string_text("it's"), "'it''s'");
        assert_eq!(string_text("a\\b"), "'a\\\\b'");
        // U+00E9 and U+1F600 (a surrogate pair in UTF-16), ISO 10303-21 §6.4.3.
        assert_eq!(string_text("é"), "'\\X2\\00E9\\X0\\'");
        assert_eq!(string_text("😀"), "'\\X2\\D83DDE00\\X0\\'");
    }

    #[test]
    fn guids_use_the_ifc_alphabet() {
        assert_eq!(guid_text(0), "0000000000000000000000");
        assert_eq!(guid_text(u128::MAX), "3$$$$$$$$$$$$$$$$$$$$$");
        assert_eq!(guid_text(64), "0000000000000000000010");
    }

    #[test]
    fn non_finite_numbers_are_reported() {
        let mut d = Data::default();
        d.add("IFCCARTESIANPOINT", &[V::reals(&[1.0, f64::INFINITY])]);
        assert_eq!(d.not_finite(), Some("IFCCARTESIANPOINT"));
    }
}
