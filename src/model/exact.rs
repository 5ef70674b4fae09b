//! Exact text form for the model's floating-point numbers. serde_json (without its
//! `float_roundtrip` feature) may parse a number one ulp away from the value written, so
//! the model stores each f64 as a JSON string holding Rust's shortest round-trip decimal
//! (`{:?}`) and reads it back with `str::parse::<f64>`, which rounds correctly.

use serde::{Deserialize, Deserializer, Serializer};

fn text(v: f64) -> String {
    format!("{v:?}")
}

fn parse<E: serde::de::Error>(s: &str) -> Result<f64, E> {
    s.parse::<f64>()
        .map_err(|_| E::custom(format!("'{s}' is not a number")))
}

/// `#[serde(with = "exact::one")]` for an `f64` field.
pub mod one {
    use super::*;
    pub fn serialize<S: Serializer>(v: &f64, s: S) -> Result<S::Ok, S::Error> {
        s.serialize_str(&text(*v))
    }
    pub fn deserialize<'de, D: Deserializer<'de>>(d: D) -> Result<f64, D::Error> {
        let s = String::deserialize(d)?;
        parse(&s)
    }
}

/// `#[serde(with = "exact::vec")]` for a `Vec<f64>` field.
pub mod vec {
    use super::*;
    use serde::ser::SerializeSeq;
    pub fn serialize<S: Serializer>(v: &[f64], s: S) -> Result<S::Ok, S::Error> {
        let mut seq = s.serialize_seq(Some(v.len()))?;
        for x in v {
            seq.serialize_element(&text(*x))?;
        }
        seq.end()
    }
    pub fn deserialize<'de, D: Deserializer<'de>>(d: D) -> Result<Vec<f64>, D::Error> {
        let v = Vec::<String>::deserialize(d)?;
        v.iter().map(|s| parse(s)).collect()
    }
}

/// `#[serde(with = "exact::vec32")]` for a `Vec<f64>` whose values are all exactly
/// representable as f32 (e.g. rounded with `as f32`): written as f32 shortest decimals
/// (at most 9 digits), read back exactly.
pub mod vec32 {
    use super::*;
    use serde::ser::SerializeSeq;
    pub fn serialize<S: Serializer>(v: &[f64], s: S) -> Result<S::Ok, S::Error> {
        let mut seq = s.serialize_seq(Some(v.len()))?;
        for x in v {
            seq.serialize_element(&format!("{:?}", *x as f32))?;
        }
        seq.end()
    }
    pub fn deserialize<'de, D: Deserializer<'de>>(d: D) -> Result<Vec<f64>, D::Error> {
        let v = Vec::<String>::deserialize(d)?;
        v.iter()
            .map(|s| {
                s.parse::<f32>()
                    .map(f64::from)
                    .map_err(|_| serde::de::Error::custom(format!("'{s}' is not a number")))
            })
            .collect()
    }
}

#[cfg(test)]
mod tests {
    #[derive(serde::Serialize, serde::Deserialize, PartialEq, Debug)]
    struct W {
        #[serde(with = "super::vec")]
        v: Vec<f64>,
        #[serde(with = "super::one")]
        x: f64,
        #[serde(with = "super::vec32")]
        w: Vec<f64>,
    }

    /// Round trip must be bit-exact for awkward values (subnormal, 17-digit, negative
    /// zero): the point of this module. std's parser rounds correctly (Rust core docs).
    #[test]
    fn round_trip_is_bit_exact() {
        use rand::{Rng, SeedableRng};
        let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(5);
        let mut v: Vec<f64> = (0..2000)
            .map(|_| f64::from_bits(rng.gen::<u64>() >> 2))
            .collect();
        v.extend([
            0.1 + 0.2,
            -0.0,
            5e-324,
            1.7976931348623157e308,
            0.30000000000000004,
        ]);
        let w32: Vec<f64> = v
            .iter()
            .map(|&x| x as f32 as f64)
            .filter(|x| x.is_finite())
            .collect();
        let w = W {
            v,
            x: 2.0f64.sqrt(),
            w: w32,
        };
        let s = serde_json::to_string(&w).unwrap();
        let back: W = serde_json::from_str(&s).unwrap();
        for (a, b) in w.v.iter().zip(&back.v) {
            assert_eq!(a.to_bits(), b.to_bits());
        }
        assert_eq!(w.x.to_bits(), back.x.to_bits());
        assert!(w.w.len() > 100);
        for (a, b) in w.w.iter().zip(&back.w) {
            assert_eq!(a.to_bits(), b.to_bits());
        }
    }
}
