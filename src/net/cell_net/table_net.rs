//! [`TableCellNet`]: a table cell genome turned into a candle network.

use candle_core::{Tensor, Var};
use rand::RngCore;

use super::cell_graph::CellGraph;
use super::params::{ParamBuilder, ParamSet};
use super::table_layers::{Linear, TableOp};
use crate::genome::{Cell, CellKind, DenseOp, TableCellGenome, STATE_H0, STATE_H1};
use crate::net::init::InitScheme;
use crate::net::{table_cell_stages, CellStage};
use crate::train::AutogradNetwork;
use crate::{Error, Result};

/// A built table cell: affine preprocessing, blocks, affine output map.
#[derive(Clone, Debug)]
struct TableCell {
    pre0: Option<Linear>,
    pre1: Option<Linear>,
    graph: CellGraph<TableOp>,
    combine: Linear,
}

impl TableCell {
    fn build(
        params: &mut ParamBuilder,
        name: &str,
        cell: &Cell<DenseOp>,
        stage: &CellStage,
    ) -> Result<Self> {
        let w = stage.output.channels as usize;
        let mut pre = [None, None];
        for (slot, (state, shape)) in [(STATE_H0, stage.h0), (STATE_H1, stage.h1)]
            .into_iter()
            .enumerate()
        {
            let width = shape.channels as usize;
            if cell.reads_state(state) && width != w {
                let map_name = format!("{name}.pre{slot}");
                pre[slot] = Some(Linear::build(
                    params,
                    &map_name,
                    width,
                    w,
                    InitScheme::GlorotUniform,
                )?);
            }
        }
        let graph = CellGraph::build(cell, |j, slot, _input, op| {
            TableOp::build(params, &format!("{name}.blocks.{j}.{slot}"), op, w)
        })?;
        let k = graph.unused.len();
        let combine = Linear::build(
            params,
            &format!("{name}.combine"),
            k * w,
            w,
            InitScheme::GlorotUniform,
        )?;
        let [pre0, pre1] = pre;
        Ok(TableCell {
            pre0,
            pre1,
            graph,
            combine,
        })
    }

    fn forward(&self, h0: &Tensor, h1: &Tensor, train: bool) -> Result<Tensor> {
        let map = |pre: &Option<Linear>, h: &Tensor| match pre {
            Some(linear) => linear.forward(h, train),
            None => Ok(h.clone()),
        };
        let joined = self
            .graph
            .run(map(&self.pre0, h0)?, map(&self.pre1, h1)?, |op, h| {
                op.forward(h, train)
            })?;
        self.combine.forward(&joined, train)
    }
}

/// A network built from a [`TableCellGenome`] by the rules of
/// `crate::net::cell_cost`: affine stem to F units, the skeleton's cells
/// (a reduction cell halves the width, rounding up), affine head.
///
/// Tensors are named `stem.…`, `cells.{i}.…`, `head.…`; weights have shape
/// (n_in, n_out) and each map computes h·W + b. Clones share parameter storage.
#[derive(Clone, Debug)]
pub struct TableCellNet {
    stem: Linear,
    cells: Vec<TableCell>,
    head: Linear,
    n_inputs: usize,
    n_classes: usize,
    pub(super) params: ParamSet,
}

impl TableCellNet {
    /// Builds the network for `n_inputs` features and `n_classes` classes
    /// with weights from stream 0 of `seed`: He uniform for relu/GELU ops,
    /// Glorot uniform for every other map, zero biases. An invalid genome,
    /// zero inputs or zero classes is an input error.
    pub fn build(
        genome: &TableCellGenome,
        n_inputs: usize,
        n_classes: usize,
        seed: u64,
    ) -> Result<Self> {
        genome.validate_basic()?;
        if n_inputs == 0 || n_classes == 0 {
            return Err(Error::input(format!(
                "a table cell network needs at least one input and one class, got {n_inputs} inputs and {n_classes} classes"
            )));
        }
        let mut params = ParamBuilder::new(seed);
        let f = genome.skeleton.channels as usize;
        let stem = Linear::build(&mut params, "stem", n_inputs, f, InitScheme::GlorotUniform)?;
        let stages = table_cell_stages(&genome.skeleton);
        let mut cells = Vec::with_capacity(stages.len());
        for (i, stage) in stages.iter().enumerate() {
            let cell = match stage.kind {
                CellKind::Normal => &genome.normal,
                CellKind::Reduction => &genome.reduction,
            };
            cells.push(TableCell::build(
                &mut params,
                &format!("cells.{i}"),
                cell,
                stage,
            )?);
        }
        let last = stages.last().map_or(f, |s| s.output.channels as usize);
        let head = Linear::build(
            &mut params,
            "head",
            last,
            n_classes,
            InitScheme::GlorotUniform,
        )?;
        Ok(TableCellNet {
            stem,
            cells,
            head,
            n_inputs,
            n_classes,
            params: params.finish(),
        })
    }

    /// Number of input features.
    pub fn n_inputs(&self) -> usize {
        self.n_inputs
    }

    /// Number of classes.
    pub fn n_classes(&self) -> usize {
        self.n_classes
    }

    /// Sum of the trainable tensors' element counts (equals `table_cell_cost(..).params`).
    pub fn param_count(&self) -> u64 {
        self.params.param_count()
    }

    /// Logits (rows, classes) for `x` of shape (rows, n_inputs); `train` records gradients.
    pub fn logits(&self, x: &Tensor, train: bool) -> Result<Tensor> {
        match x.dims() {
            [_, n] if *n == self.n_inputs => {}
            other => {
                return Err(Error::input(format!(
                    "table cell network needs rows of {} features, got shape {other:?}",
                    self.n_inputs
                )))
            }
        }
        let mut h1 = self.stem.forward(x, train)?;
        let mut h0 = h1.clone();
        for cell in &self.cells {
            let out = cell.forward(&h0, &h1, train)?;
            h0 = std::mem::replace(&mut h1, out);
        }
        self.head.forward(&h1, train)
    }
}

impl AutogradNetwork for TableCellNet {
    fn n_inputs(&self) -> usize {
        self.n_inputs
    }

    fn n_classes(&self) -> usize {
        self.n_classes
    }

    fn forward(&self, x: &Tensor, train: bool, _rng: &mut dyn RngCore) -> Result<Tensor> {
        self.logits(x, train)
    }

    fn variables(&self) -> Result<Vec<Var>> {
        Ok(self.params.vars.iter().map(|v| v.var.clone()).collect())
    }

    fn weight_decay_flags(&self) -> Vec<bool> {
        self.params.vars.iter().map(|v| v.decay).collect()
    }
}
