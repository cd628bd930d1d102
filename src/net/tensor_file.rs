//! Writing named tensors as a safetensors file.

use std::collections::HashMap;
use std::path::Path;

use candle_core::Tensor;

use crate::{Error, Result};

/// Writes `tensors` to `path` as a safetensors file: the bytes are
/// serialised in memory and written to `path` itself, so nothing but `path`
/// appears in its folder (the safetensors crate's own file writer makes a
/// temporary file of its own name beside it, which a killed process would
/// leave behind). Callers pass a temporary path of gemmule's
/// ([`crate::fsio::temp_sibling`]) and commit it themselves.
///
/// The bytes equal those of `candle_core::safetensors::save` for the same
/// tensors (both call the same serialiser).
pub fn write_tensor_file(tensors: &HashMap<String, Tensor>, path: &Path) -> Result<()> {
    let bytes = safetensors::serialize(tensors, None)
        .map_err(|e| Error::io(path, std::io::Error::other(e.to_string())))?;
    std::fs::write(path, bytes).map_err(|e| Error::io(path, e))
}

#[cfg(test)]
mod tests {
    use super::*;
    use candle_core::Device;

    #[test]
    fn bytes_equal_candles_own_writer_and_no_other_file_appears() {
        let dir = tempfile::tempdir().expect("temp dir");
        let tensors: HashMap<String, Tensor> = [
            ("b".to_string(), Tensor::new(&[1.0f32, 2.0], &Device::Cpu)),
            (
                "a".to_string(),
                Tensor::new(&[[3.0f32], [4.0]], &Device::Cpu),
            ),
        ]
        .into_iter()
        .map(|(name, tensor)| (name, tensor.expect("tensor")))
        .collect();
        let ours = dir.path().join("ours.safetensors");
        write_tensor_file(&tensors, &ours).expect("written");
        let listed: Vec<_> = std::fs::read_dir(dir.path()).expect("list").collect();
        assert_eq!(listed.len(), 1, "only the file itself");
        let theirs = dir.path().join("theirs.safetensors");
        candle_core::safetensors::save(&tensors, &theirs).expect("candle writes");
        assert_eq!(
            std::fs::read(&ours).expect("ours"),
            std::fs::read(&theirs).expect("theirs")
        );
    }
}
