//! The one place that knows the wire encoding of descriptors and parameters.
//! bincode 2.0.1 in serde mode with its standard configuration; swap it here alone.

use serde::{Serialize, de::DeserializeOwned};

/// Encodes a value for the plugin boundary.
pub fn encode<T: Serialize>(value: &T) -> Result<Vec<u8>, String> {
    bincode::serde::encode_to_vec(value, bincode::config::standard()).map_err(|e| e.to_string())
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
