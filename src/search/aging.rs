//! Regularized ("aging") evolution (Real et al., AAAI 2019).
//!
//! A population of the last P evaluated genomes. The first P proposals fill it
//! (random samples, or given seed genomes); afterwards each proposal samples S
//! members uniformly without replacement, takes the best as parent and mutates
//! it once. Every observed child joins the population and the oldest member
//! leaves, so good genomes must keep being rediscovered to survive.
//!
//! Tie rule: among sampled members with equal objectives (including several
//! without a score) the younger one, i.e. the larger journal index, becomes
//! the parent. On a plateau this keeps moving to the newest variant, a
//! neutral drift that helps cross flat regions.

use super::budget::{default_population, default_sample_size};
use super::evaluation::Evaluation;
use super::strategy::{compare_objectives, Proposal, Strategy};
use crate::genome::{SearchSpace, SeededRng};
use crate::{Error, Result};
use serde::{Deserialize, Serialize};
use std::collections::VecDeque;
use std::sync::Arc;

/// Population and sample size of aging evolution.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
pub struct AgingSettings {
    /// P: how many of the most recent evaluations form the population.
    pub population: usize,
    /// S: how many members are sampled to pick one parent.
    pub sample_size: usize,
}

impl AgingSettings {
    /// The defaults for an evaluation budget (see [`default_population`]).
    pub fn for_budget(evaluations: u64) -> Self {
        let population = default_population(evaluations);
        AgingSettings {
            population,
            sample_size: default_sample_size(population),
        }
    }

    /// Checks `1 <= S <= P <= evaluations`.
    pub fn check(&self, evaluations: u64) -> Result<()> {
        if self.sample_size == 0 {
            return Err(Error::input(
                "the tournament sample size (--sample-size) is 0; it must be at least 1",
            ));
        }
        if self.population == 0 {
            return Err(Error::input(
                "the population (--population) is 0; it must be at least 1",
            ));
        }
        if self.sample_size > self.population {
            return Err(Error::input(format!(
                "the tournament sample size (--sample-size {}) must not exceed the population \
                 (--population {}); lower the sample size or raise the population",
                self.sample_size, self.population
            )));
        }
        if self.population as u64 > evaluations {
            return Err(Error::input(format!(
                "the population (--population {}) must not exceed the evaluation budget \
                 (--budget {evaluations}); lower the population or raise the budget",
                self.population
            )));
        }
        Ok(())
    }
}

/// One member of the population.
struct Member<G> {
    index: u64,
    genome: G,
    objective: Option<f64>,
}

/// The aging-evolution strategy over a search space.
pub struct AgingEvolution<S: SearchSpace> {
    space: Arc<S>,
    settings: AgingSettings,
    seed_genomes: Vec<S::Genome>,
    settings_record: serde_json::Value,
    population: VecDeque<Member<S::Genome>>,
}

impl<S: SearchSpace> AgingEvolution<S> {
    /// Aging evolution with the given settings, checked against the evaluation budget.
    pub fn new(space: Arc<S>, settings: AgingSettings, evaluations: u64) -> Result<Self> {
        settings.check(evaluations)?;
        let mut strategy = AgingEvolution {
            space,
            settings,
            seed_genomes: Vec::new(),
            settings_record: serde_json::Value::Null,
            population: VecDeque::new(),
        };
        strategy.settings_record = strategy.describe()?;
        Ok(strategy)
    }

    /// Starts from the given genomes instead of random samples.
    ///
    /// Proposals `0..n` are the n seed genomes verbatim; proposals `n..P`
    /// cycle through them again, each mutated once (parent = the journal
    /// index of the verbatim copy), so the first population is not n
    /// identical clans of clones.
    pub fn with_seed_genomes(mut self, genomes: Vec<S::Genome>) -> Result<Self> {
        if genomes.is_empty() {
            return Err(Error::input("at least one seed genome is needed"));
        }
        for (position, genome) in genomes.iter().enumerate() {
            self.space
                .validate(genome)
                .map_err(|e| Error::input(format!("seed genome {}: {e}", position + 1)))?;
        }
        self.seed_genomes = genomes;
        self.settings_record = self.describe()?;
        Ok(self)
    }

    /// Journal indices of the current population, oldest first.
    pub fn population_indices(&self) -> Vec<u64> {
        self.population.iter().map(|member| member.index).collect()
    }

    fn describe(&self) -> Result<serde_json::Value> {
        let seeds = serde_json::to_value(&self.seed_genomes)
            .map_err(|e| Error::internal(format!("seed genomes are not serializable: {e}")))?;
        Ok(serde_json::json!({
            "population": self.settings.population,
            "sample_size": self.settings.sample_size,
            "seed_genomes": seeds,
        }))
    }

    fn initial(&self, index: u64, rng: &mut SeededRng) -> Proposal<S::Genome> {
        let count = self.seed_genomes.len() as u64;
        if count == 0 {
            return fresh(self.space.sample(rng));
        }
        let origin = index % count;
        let seed = &self.seed_genomes[origin as usize];
        if index < count {
            return fresh(seed.clone());
        }
        let child = self.space.mutate(seed, rng);
        Proposal {
            genome: child.genome,
            parent: Some(origin),
            mutation: Some(child.mutation.to_string()),
        }
    }

    /// The best of `min(S, population)` members drawn without replacement.
    fn tournament(&self, rng: &mut SeededRng) -> Option<&Member<S::Genome>> {
        let amount = self.settings.sample_size.min(self.population.len());
        rand::seq::index::sample(rng, self.population.len(), amount)
            .into_iter()
            .filter_map(|position| self.population.get(position))
            .max_by(|a, b| compare_objectives(a.objective, b.objective).then(a.index.cmp(&b.index)))
    }
}

fn fresh<G>(genome: G) -> Proposal<G> {
    Proposal {
        genome,
        parent: None,
        mutation: None,
    }
}

impl<S: SearchSpace> Strategy<S::Genome> for AgingEvolution<S> {
    fn name(&self) -> &'static str {
        "aging_evolution"
    }

    fn settings(&self) -> serde_json::Value {
        self.settings_record.clone()
    }

    fn propose(&mut self, index: u64, rng: &mut SeededRng) -> Proposal<S::Genome> {
        if index < self.settings.population as u64 {
            return self.initial(index, rng);
        }
        let Some(parent) = self.tournament(rng) else {
            return fresh(self.space.sample(rng));
        };
        let child = self.space.mutate(&parent.genome, rng);
        Proposal {
            genome: child.genome,
            parent: Some(parent.index),
            mutation: Some(child.mutation.to_string()),
        }
    }

    /// The worst objective among the scored members once the population is
    /// full: a child that cannot beat it would rank below every scored
    /// member. `None` while the population fills up or when no member has a
    /// score. Members without a score (diverged, failed, over budget) are
    /// left out, so one of them does not switch the cut off for P evaluations.
    fn cut_bar(&self) -> Option<f64> {
        if self.population.len() < self.settings.population {
            return None;
        }
        self.population
            .iter()
            .filter_map(|member| member.objective)
            .filter(|value| value.is_finite())
            .reduce(f64::min)
    }

    fn observe(&mut self, index: u64, genome: &S::Genome, evaluation: &Evaluation) {
        self.population.push_back(Member {
            index,
            genome: genome.clone(),
            objective: evaluation.objective,
        });
        while self.population.len() > self.settings.population {
            let oldest = self
                .population
                .iter()
                .enumerate()
                .min_by_key(|(_, member)| member.index)
                .map(|(position, _)| position);
            match oldest {
                Some(position) => drop(self.population.remove(position)),
                None => break,
            }
        }
    }
}
