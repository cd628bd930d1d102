//! Evaluating a cell's blocks: the part image and table cells share.

use candle_core::Tensor;

use crate::genome::{Cell, CellOp};
use crate::{Error, Result};

/// One branch of a block: the state it reads and the module applied to it.
#[derive(Clone, Debug)]
pub(crate) struct Branch<M> {
    pub(crate) input: usize,
    pub(crate) module: M,
}

/// The blocks of a built cell and the block outputs that form its output.
#[derive(Clone, Debug)]
pub(crate) struct CellGraph<M> {
    pub(crate) blocks: Vec<[Branch<M>; 2]>,
    pub(crate) unused: Vec<usize>,
}

impl<M> CellGraph<M> {
    /// Builds one module per branch of `cell` with `make(block, slot, input, op)`.
    pub(crate) fn build<Op: CellOp>(
        cell: &Cell<Op>,
        mut make: impl FnMut(usize, usize, u8, Op) -> Result<M>,
    ) -> Result<Self> {
        let mut blocks = Vec::with_capacity(cell.blocks.len());
        for (j, block) in cell.blocks.iter().enumerate() {
            let [(in0, op0), (in1, op1)] = block.pairs();
            blocks.push([
                Branch {
                    input: usize::from(in0),
                    module: make(j, 0, in0, op0)?,
                },
                Branch {
                    input: usize::from(in1),
                    module: make(j, 1, in1, op1)?,
                },
            ]);
        }
        Ok(CellGraph {
            blocks,
            unused: cell.unused_blocks(),
        })
    }

    /// Runs the blocks on the states `[h0, h1]` and returns the unused block
    /// outputs concatenated along axis 1.
    pub(crate) fn run(
        &self,
        h0: Tensor,
        h1: Tensor,
        apply: impl Fn(&M, &Tensor) -> Result<Tensor>,
    ) -> Result<Tensor> {
        let mut states = Vec::with_capacity(self.blocks.len() + 2);
        states.push(h0);
        states.push(h1);
        for block in &self.blocks {
            let mut sum: Option<Tensor> = None;
            for branch in block {
                let input = states.get(branch.input).ok_or_else(|| {
                    Error::internal(format!(
                        "a block reads state {} before it exists",
                        branch.input
                    ))
                })?;
                let out = apply(&branch.module, input)?;
                sum = Some(match sum {
                    Some(previous) => (previous + out)?,
                    None => out,
                });
            }
            let sum = sum.ok_or_else(|| Error::internal("a block without branches"))?;
            states.push(sum);
        }
        let parts: Vec<Tensor> = self.unused.iter().map(|&j| states[j + 2].clone()).collect();
        Ok(Tensor::cat(&parts, 1)?)
    }
}
