//! Reading candle CPU storage inside custom ops.

use candle_core::{CpuStorage, Layout};

/// The f32 values of a contiguous tensor, checked to hold `expected` values.
pub(crate) fn contiguous_f32<'a>(
    storage: &'a CpuStorage,
    layout: &Layout,
    expected: usize,
    op: &str,
) -> candle_core::Result<&'a [f32]> {
    let CpuStorage::F32(values) = storage else {
        candle_core::bail!("{op}: expected f32 storage")
    };
    let Some((start, end)) = layout.contiguous_offsets() else {
        candle_core::bail!("{op}: expected a contiguous tensor")
    };
    match values.get(start..end) {
        Some(slice) if slice.len() == expected => Ok(slice),
        _ => candle_core::bail!(
            "{op}: expected {expected} values, got {}",
            end.saturating_sub(start)
        ),
    }
}
