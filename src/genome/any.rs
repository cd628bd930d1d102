//! One genome type and one search space type over all of gemmule's
//! encodings, so the search, the journal, finalize and the reports handle
//! layer genomes and cell genomes through the same code.

use super::cell::{CellOp, ConvOp, DenseOp, ImageCellGenome, TableCellGenome};
use super::cell_space::{ImageCellSpace, TableCellSpace};
use super::layer::{LayerGenome, TrainGenes};
use super::layer_space::LayerSpace;
use super::space::{Mutated, SearchSpace, SeededRng};
use crate::{Error, Result};
use num_bigint::BigUint;
use serde::{Deserialize, Deserializer, Serialize, Serializer};
use std::fmt;

/// The encodings a search can use.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize, Deserialize)]
pub enum Encoding {
    /// A stack of hidden layers (MLP), for tables or flattened images.
    #[serde(rename = "layers")]
    Layers,
    /// NASNet-style cells of convolutions and pools, for images.
    #[serde(rename = "cells_image")]
    ImageCells,
    /// NASNet-style cells of dense ops, for tables.
    #[serde(rename = "cells_table")]
    TableCells,
}

impl Encoding {
    /// The name used in journals, model files and on the command line.
    pub fn name(self) -> &'static str {
        match self {
            Encoding::Layers => "layers",
            Encoding::ImageCells => ConvOp::ENCODING,
            Encoding::TableCells => DenseOp::ENCODING,
        }
    }

    /// Reads a name written by [`Encoding::name`].
    pub fn from_name(name: &str) -> Result<Encoding> {
        [Encoding::Layers, Encoding::ImageCells, Encoding::TableCells]
            .into_iter()
            .find(|e| e.name() == name)
            .ok_or_else(|| {
                Error::input(format!(
                    "encoding `{name}` is unknown; use layers, cells_image or cells_table"
                ))
            })
    }

    /// Whether the encoding needs image-shaped input (convolutions).
    pub fn needs_images(self) -> bool {
        self == Encoding::ImageCells
    }
}

impl fmt::Display for Encoding {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.name())
    }
}

/// A genome of any encoding.
///
/// JSON: exactly the inner genome's form (a cell genome carries its `"ops"`
/// tag, a layer genome has none), so journals and model files of layer runs
/// read the same as before cell genomes existed.
#[derive(Debug, Clone, PartialEq)]
pub enum AnyGenome {
    /// Hidden layers of an MLP.
    Layers(LayerGenome),
    /// Cells of convolutions and pools (images).
    ImageCells(ImageCellGenome),
    /// Cells of dense ops (tables).
    TableCells(TableCellGenome),
}

impl AnyGenome {
    /// The genome's encoding.
    pub fn encoding(&self) -> Encoding {
        match self {
            AnyGenome::Layers(_) => Encoding::Layers,
            AnyGenome::ImageCells(_) => Encoding::ImageCells,
            AnyGenome::TableCells(_) => Encoding::TableCells,
        }
    }

    /// The stable 12-hex id of the inner genome.
    pub fn id(&self) -> String {
        match self {
            AnyGenome::Layers(g) => g.id(),
            AnyGenome::ImageCells(g) => g.id(),
            AnyGenome::TableCells(g) => g.id(),
        }
    }

    /// The training genes (optimiser, learning rate, batch size, weight decay).
    pub fn training(&self) -> &TrainGenes {
        match self {
            AnyGenome::Layers(g) => &g.training,
            AnyGenome::ImageCells(g) => &g.training,
            AnyGenome::TableCells(g) => &g.training,
        }
    }

    /// The canonical JSON text of the inner genome.
    pub fn canonical_json(&self) -> String {
        match self {
            AnyGenome::Layers(g) => g.canonical_json(),
            AnyGenome::ImageCells(g) => g.canonical_json(),
            AnyGenome::TableCells(g) => g.canonical_json(),
        }
    }

    /// Checks the limits every genome of its encoding must meet.
    pub fn validate_basic(&self) -> Result<()> {
        match self {
            AnyGenome::Layers(g) => g.validate_basic(),
            AnyGenome::ImageCells(g) => g.validate_basic(),
            AnyGenome::TableCells(g) => g.validate_basic(),
        }
    }

    /// Reads a genome from a JSON value: a cell genome when its `"ops"` tag
    /// names a catalogue, a layer genome otherwise. `source` names the genome
    /// in errors (e.g. a file name or "journal evaluation 7").
    pub fn from_value(value: &serde_json::Value, source: &str) -> Result<AnyGenome> {
        Self::from_value_inner(value).map_err(|e| Error::input(format!("{source}: {e}")))
    }

    /// Parses JSON text (a file's content), naming `source` with line and column in errors.
    pub fn from_json(text: &str, source: &str) -> Result<AnyGenome> {
        let value: serde_json::Value = serde_json::from_str(text).map_err(|e| {
            Error::input(format!(
                "{source}:{}:{}: not valid JSON: {e}",
                e.line(),
                e.column()
            ))
        })?;
        match value.get("ops").and_then(|t| t.as_str()) {
            Some(t) if t == ConvOp::TAG => {
                ImageCellGenome::from_json(text, source).map(AnyGenome::ImageCells)
            }
            Some(t) if t == DenseOp::TAG => {
                TableCellGenome::from_json(text, source).map(AnyGenome::TableCells)
            }
            Some(other) => Err(Error::input(format!(
                "{source}: \"ops\" is \"{other}\"; a cell genome uses \"{}\" (images) or \"{}\" (tables)",
                ConvOp::TAG,
                DenseOp::TAG
            ))),
            None => LayerGenome::from_json(text, source).map(AnyGenome::Layers),
        }
    }

    fn from_value_inner(value: &serde_json::Value) -> std::result::Result<AnyGenome, String> {
        let tag = value.get("ops").and_then(|ops| ops.as_str());
        let parsed = match tag {
            Some(t) if t == ConvOp::TAG => {
                serde_json::from_value(value.clone()).map(AnyGenome::ImageCells)
            }
            Some(t) if t == DenseOp::TAG => {
                serde_json::from_value(value.clone()).map(AnyGenome::TableCells)
            }
            Some(other) => {
                return Err(format!(
                    "\"ops\" is \"{other}\"; a cell genome uses \"{}\" (images) or \"{}\" (tables)",
                    ConvOp::TAG,
                    DenseOp::TAG
                ))
            }
            None => serde_json::from_value(value.clone()).map(AnyGenome::Layers),
        };
        parsed.map_err(|e| {
            let kind = match tag {
                Some(_) => "cell genome",
                None => "layer genome (a cell genome needs an \"ops\" field)",
            };
            format!("not a valid {kind}: {e}")
        })
    }
}

impl From<LayerGenome> for AnyGenome {
    fn from(genome: LayerGenome) -> Self {
        AnyGenome::Layers(genome)
    }
}

impl From<ImageCellGenome> for AnyGenome {
    fn from(genome: ImageCellGenome) -> Self {
        AnyGenome::ImageCells(genome)
    }
}

impl From<TableCellGenome> for AnyGenome {
    fn from(genome: TableCellGenome) -> Self {
        AnyGenome::TableCells(genome)
    }
}

impl Serialize for AnyGenome {
    fn serialize<S: Serializer>(&self, serializer: S) -> std::result::Result<S::Ok, S::Error> {
        match self {
            AnyGenome::Layers(g) => g.serialize(serializer),
            AnyGenome::ImageCells(g) => g.serialize(serializer),
            AnyGenome::TableCells(g) => g.serialize(serializer),
        }
    }
}

impl<'de> Deserialize<'de> for AnyGenome {
    fn deserialize<D: Deserializer<'de>>(deserializer: D) -> std::result::Result<Self, D::Error> {
        let value = serde_json::Value::deserialize(deserializer)?;
        AnyGenome::from_value_inner(&value).map_err(serde::de::Error::custom)
    }
}

/// A search space of any encoding; the space a search runs in.
///
/// JSON: `{"encoding": …, "settings": …}` as [`SearchSpace::describe`]
/// writes it; a bare layer space (older comparison plans) also reads.
#[derive(Debug, Clone, PartialEq)]
pub enum AnySpace {
    /// Layer genomes.
    Layers(LayerSpace),
    /// Image cell genomes.
    ImageCells(ImageCellSpace),
    /// Table cell genomes.
    TableCells(TableCellSpace),
}

impl Default for AnySpace {
    /// The default layer space.
    fn default() -> Self {
        AnySpace::Layers(LayerSpace::default())
    }
}

impl From<LayerSpace> for AnySpace {
    fn from(space: LayerSpace) -> Self {
        AnySpace::Layers(space)
    }
}

impl From<ImageCellSpace> for AnySpace {
    fn from(space: ImageCellSpace) -> Self {
        AnySpace::ImageCells(space)
    }
}

impl From<TableCellSpace> for AnySpace {
    fn from(space: TableCellSpace) -> Self {
        AnySpace::TableCells(space)
    }
}

impl AnySpace {
    /// The default space of `encoding`.
    pub fn default_for(encoding: Encoding) -> AnySpace {
        match encoding {
            Encoding::Layers => AnySpace::Layers(LayerSpace::default()),
            Encoding::ImageCells => AnySpace::ImageCells(ImageCellSpace::default()),
            Encoding::TableCells => AnySpace::TableCells(TableCellSpace::default()),
        }
    }

    /// The encoding of the space's genomes.
    pub fn encoding(&self) -> Encoding {
        match self {
            AnySpace::Layers(_) => Encoding::Layers,
            AnySpace::ImageCells(_) => Encoding::ImageCells,
            AnySpace::TableCells(_) => Encoding::TableCells,
        }
    }

    /// Checks the bounds themselves.
    pub fn check(&self) -> Result<()> {
        match self {
            AnySpace::Layers(s) => s.check(),
            AnySpace::ImageCells(s) => s.check(),
            AnySpace::TableCells(s) => s.check(),
        }
    }

    /// Reads a space file of `encoding` (JSON), naming `source` in errors.
    pub fn from_json(encoding: Encoding, text: &str, source: &str) -> Result<AnySpace> {
        Ok(match encoding {
            Encoding::Layers => AnySpace::Layers(LayerSpace::from_json(text, source)?),
            Encoding::ImageCells => AnySpace::ImageCells(ImageCellSpace::from_json(text, source)?),
            Encoding::TableCells => AnySpace::TableCells(TableCellSpace::from_json(text, source)?),
        })
    }

    /// Reads a space back from the block [`SearchSpace::describe`] wrote
    /// (`{"encoding": …, "settings": …}`) in a journal header.
    pub fn from_description(block: &serde_json::Value) -> Result<AnySpace> {
        let encoding = block
            .get("encoding")
            .and_then(|e| e.as_str())
            .ok_or_else(|| Error::input("the journal header's space block has no encoding"))?;
        let encoding = Encoding::from_name(encoding)?;
        let settings = block
            .get("settings")
            .cloned()
            .ok_or_else(|| Error::input("the journal header's space block has no settings"))?;
        let unreadable = |e: serde_json::Error| {
            Error::input(format!(
                "the journal header's search space is unreadable: {e}"
            ))
        };
        let space = match encoding {
            Encoding::Layers => {
                AnySpace::Layers(serde_json::from_value(settings).map_err(unreadable)?)
            }
            Encoding::ImageCells => {
                AnySpace::ImageCells(serde_json::from_value(settings).map_err(unreadable)?)
            }
            Encoding::TableCells => {
                AnySpace::TableCells(serde_json::from_value(settings).map_err(unreadable)?)
            }
        };
        space.check()?;
        Ok(space)
    }

    fn mismatch(&self, genome: &AnyGenome) -> Error {
        Error::input(format!(
            "genome {} is a {} genome, but the search space holds {} genomes",
            genome.id(),
            genome.encoding(),
            self.encoding()
        ))
    }
}

impl SearchSpace for AnySpace {
    type Genome = AnyGenome;

    /// The inner space's distribution.
    fn sample(&self, rng: &mut SeededRng) -> AnyGenome {
        match self {
            AnySpace::Layers(s) => AnyGenome::Layers(s.sample(rng)),
            AnySpace::ImageCells(s) => AnyGenome::ImageCells(s.sample(rng)),
            AnySpace::TableCells(s) => AnyGenome::TableCells(s.sample(rng)),
        }
    }

    /// The inner space's catalogue. A genome of another encoding cannot reach
    /// a search (seed genomes and journals are validated first); it would be
    /// returned unchanged as an `identity` mutation.
    fn mutate(&self, parent: &AnyGenome, rng: &mut SeededRng) -> Mutated<AnyGenome> {
        fn wrap<G>(m: Mutated<G>, f: impl Fn(G) -> AnyGenome) -> Mutated<AnyGenome> {
            Mutated {
                genome: f(m.genome),
                mutation: m.mutation,
            }
        }
        match (self, parent) {
            (AnySpace::Layers(s), AnyGenome::Layers(g)) => {
                wrap(s.mutate(g, rng), AnyGenome::Layers)
            }
            (AnySpace::ImageCells(s), AnyGenome::ImageCells(g)) => {
                wrap(s.mutate(g, rng), AnyGenome::ImageCells)
            }
            (AnySpace::TableCells(s), AnyGenome::TableCells(g)) => {
                wrap(s.mutate(g, rng), AnyGenome::TableCells)
            }
            _ => Mutated {
                genome: parent.clone(),
                mutation: "identity",
            },
        }
    }

    fn genome_id(&self, genome: &AnyGenome) -> String {
        genome.id()
    }

    fn validate(&self, genome: &AnyGenome) -> Result<()> {
        match (self, genome) {
            (AnySpace::Layers(s), AnyGenome::Layers(g)) => s.validate(g),
            (AnySpace::ImageCells(s), AnyGenome::ImageCells(g)) => s.validate(g),
            (AnySpace::TableCells(s), AnyGenome::TableCells(g)) => s.validate(g),
            _ => Err(self.mismatch(genome)),
        }
    }

    fn size(&self) -> BigUint {
        match self {
            AnySpace::Layers(s) => s.size(),
            AnySpace::ImageCells(s) => s.size(),
            AnySpace::TableCells(s) => s.size(),
        }
    }

    fn describe(&self) -> serde_json::Value {
        match self {
            AnySpace::Layers(s) => s.describe(),
            AnySpace::ImageCells(s) => s.describe(),
            AnySpace::TableCells(s) => s.describe(),
        }
    }
}

impl Serialize for AnySpace {
    fn serialize<S: Serializer>(&self, serializer: S) -> std::result::Result<S::Ok, S::Error> {
        self.describe().serialize(serializer)
    }
}

impl<'de> Deserialize<'de> for AnySpace {
    fn deserialize<D: Deserializer<'de>>(deserializer: D) -> std::result::Result<Self, D::Error> {
        let value = serde_json::Value::deserialize(deserializer)?;
        if value.get("encoding").is_some() {
            AnySpace::from_description(&value).map_err(serde::de::Error::custom)
        } else {
            serde_json::from_value::<LayerSpace>(value)
                .map(AnySpace::Layers)
                .map_err(serde::de::Error::custom)
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::genome::{reference_image_cell_genome, reference_table_cell_genome};

    fn layer_genome() -> LayerGenome {
        LayerGenome::from_json(
            r#"{"layers":[{"width":8,"activation":"relu"}],"training":{"learning_rate":0.01,"batch_size":16}}"#,
            "test",
        )
        .unwrap()
    }

    #[test]
    fn any_genome_json_is_the_inner_genome_json() {
        let genomes = [
            AnyGenome::Layers(layer_genome()),
            AnyGenome::ImageCells(reference_image_cell_genome()),
            AnyGenome::TableCells(reference_table_cell_genome()),
        ];
        for genome in genomes {
            let text = serde_json::to_string(&genome).unwrap();
            assert_eq!(
                text,
                genome.canonical_json(),
                "no wrapper around the inner form"
            );
            let back: AnyGenome = serde_json::from_str(&text).unwrap();
            assert_eq!(back, genome);
            assert_eq!(AnyGenome::from_json(&text, "x").unwrap(), genome);
        }
    }

    #[test]
    fn unknown_ops_tags_and_layer_typos_are_named() {
        let err = AnyGenome::from_json(r#"{"ops":"quantum"}"#, "g.json").unwrap_err();
        assert!(err.to_string().contains("\"ops\" is \"quantum\""), "{err}");
        let err = AnyGenome::from_json(r#"{"layerz":[]}"#, "g.json").unwrap_err();
        assert!(err.to_string().contains("g.json"), "{err}");
    }

    #[test]
    fn spaces_read_back_from_their_description_and_from_bare_layer_spaces() {
        for space in [
            AnySpace::default_for(Encoding::Layers),
            AnySpace::default_for(Encoding::ImageCells),
            AnySpace::default_for(Encoding::TableCells),
        ] {
            let text = serde_json::to_string(&space).unwrap();
            let back: AnySpace = serde_json::from_str(&text).unwrap();
            assert_eq!(back, space);
        }
        let bare = serde_json::to_string(&LayerSpace::default()).unwrap();
        let back: AnySpace = serde_json::from_str(&bare).unwrap();
        assert_eq!(back, AnySpace::Layers(LayerSpace::default()));
    }

    #[test]
    fn a_space_refuses_genomes_of_another_encoding() {
        let space = AnySpace::default_for(Encoding::TableCells);
        let err = space
            .validate(&AnyGenome::Layers(layer_genome()))
            .unwrap_err();
        assert!(err.to_string().contains("layers genome"), "{err}");
        assert!(err.to_string().contains("cells_table"), "{err}");
    }
}
