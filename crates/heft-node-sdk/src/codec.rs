//! The one place that knows the wire encoding of descriptors and parameters.
//! bincode 2.0.1 in serde mode with its standard configuration; swap it here alone.

use serde::{Serialize, de::DeserializeOwned};

/// Encodes a value for the plugin boundary.
pub fn encode<T: Serialize>(value: &T) -> Result<Vec<u8>, String> {
    bincode::serde::encode_to_vec(value, bincode::config::standard()).map_err(|e| e.to_string())
}

/// Decodes a value from the front of `bytes`; returns it and the bytes it took.
pub fn decode_prefix<T: DeserializeOwned>(bytes: &[u8]) -> Result<(T, usize), String> {
    bincode::serde::decode_from_slice(bytes, bincode::config::standard()).map_err(|e| e.to_string())
}

/// Decodes a value from the plugin boundary; trailing bytes are an error.
pub fn decode<T: DeserializeOwned>(bytes: &[u8]) -> Result<T, String> {
    let (value, used) =
        bincode::serde::decode_from_slice(bytes, bincode::config::standard()).map_err(|e| e.to_string())?;
    if used != bytes.len() {
        return Err(format!("{} trailing bytes after the encoded value", bytes.len() - used));
    }
    Ok(value)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::descriptor::{NodeSpec, ParamSpec, ParamValue, PluginDescriptor, PortKind, PortSpec};
    use crate::units::Dimension;

    fn sample() -> PluginDescriptor {
        PluginDescriptor {
            name: "sample".into(),
            version: "1.2.3".into(),
            windowed: Vec::new(),
            nodes: vec![NodeSpec {
                name: "n".into(),
                doc: "d".into(),
                notes: String::new(),
                summaries: Vec::new(),
                inputs: vec![
                    PortSpec::new("a", PortKind::Points, Dimension::Length, "pts")
                        .with_points(4)
                        .optional(),
                ],
                outputs: vec![PortSpec::new("b", PortKind::Transform, Dimension::Length, "t")],
                params: vec![
                    ParamSpec::number("m", Dimension::Mass, 58.0, (1.0, 500.0), "mass"),
                    ParamSpec::choice("c", &["single", "ring"], "placement"),
                    ParamSpec::keys("k", Dimension::Length, 2, "keys"),
                ],
            }],
        }
    }

    #[test]
    fn descriptors_and_values_round_trip() {
        let d = sample();
        assert_eq!(
            decode::<PluginDescriptor>(&encode(&d).expect("encodes")).expect("decodes"),
            d
        );
        let v = vec![
            ParamValue::Number(-0.0),
            ParamValue::Integer(i64::MIN),
            ParamValue::Keys(vec![(0.5, [1.0, f64::MAX, -3.0])]),
            ParamValue::Choice("ring".into()),
        ];
        let back: Vec<ParamValue> = decode(&encode(&v).expect("encodes")).expect("decodes");
        assert_eq!(back, v);
        assert!(matches!(back[0], ParamValue::Number(x) if x.to_bits() == (-0.0f64).to_bits()));
    }

    /// Code names cross after the descriptor: they come back on their port, and the bytes of a
    /// plugin built before them (the descriptor alone) still read, with no codes.
    #[test]
    fn code_names_cross_after_the_descriptor_and_old_descriptors_still_read() {
        use crate::descriptor::{decode_descriptor, encode_descriptor};
        let mut d = sample();
        d.nodes[0].outputs[0] = d.nodes[0].outputs[0].clone().with_codes(&["still", "moving"]);
        let back = decode_descriptor(&encode_descriptor(&d).expect("encodes")).expect("decodes");
        assert_eq!(back.nodes[0].outputs[0].codes, ["still", "moving"]);
        assert_eq!(back, d);
        let old = decode_descriptor(&encode(&sample()).expect("encodes")).expect("decodes");
        assert_eq!(old, sample());
        assert!(old.nodes[0].outputs[0].codes.is_empty());
    }

    /// A default scaled by another parameter crosses after the code names and comes back on
    /// its parameter; the bytes of a plugin built with code names but before scaled defaults
    /// (the descriptor, then the code names alone, written here by a mirror of that layout)
    /// still read, with no scaled default.
    #[test]
    fn scaled_defaults_cross_after_the_code_names() {
        use crate::descriptor::{decode_descriptor, encode_descriptor};
        let mut d = sample();
        d.nodes[0].params[0] = d.nodes[0].params[0].clone().scaled_by("height", 0.17);
        let back = decode_descriptor(&encode_descriptor(&d).expect("encodes")).expect("decodes");
        assert_eq!(
            back.nodes[0].params[0].scaled_default,
            Some(("height".to_owned(), 0.17))
        );
        assert_eq!(back, d);
        #[derive(serde::Serialize)]
        struct CodesOnly {
            output_codes: Vec<(u32, u32, Vec<String>)>,
        }
        let mut bytes = encode(&sample()).expect("encodes");
        bytes.extend(
            encode(&CodesOnly {
                output_codes: vec![(0, 0, vec!["still".into()])],
            })
            .expect("encodes"),
        );
        let old = decode_descriptor(&bytes).expect("decodes");
        assert_eq!(old.nodes[0].outputs[0].codes, ["still"]);
        assert!(old.nodes[0].params.iter().all(|p| p.scaled_default.is_none()));
    }

    #[test]
    fn trailing_or_truncated_bytes_are_errors_not_panics() {
        let mut bytes = encode(&sample()).expect("encodes");
        bytes.push(0);
        assert!(
            decode::<PluginDescriptor>(&bytes)
                .expect_err("trailing")
                .contains("trailing")
        );
        bytes.truncate(bytes.len() / 2);
        assert!(decode::<PluginDescriptor>(&bytes).is_err());
        assert!(decode::<Vec<ParamValue>>(&[0xff; 9]).is_err());
    }
}
