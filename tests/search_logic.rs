//! Strategy logic: aging evolution, random search, defaults, seeds, summaries.

mod search_toy;

use gemmule::genome::SearchSpace;
use gemmule::search::seeds::{evaluation_seed, proposal_rng};
use gemmule::search::{
    default_population, default_sample_size, AgingEvolution, AgingSettings, EvalStatus, Evaluation,
    EvaluationRecord, Evaluator, RandomSampling, RunSummary, Strategy,
};
use search_toy::{matches, target, MatchEvaluator, MatchSpace, LENGTH};
use std::collections::BTreeMap;
use std::sync::Arc;

fn scored(objective: Option<f64>) -> Evaluation {
    Evaluation {
        status: if objective.is_some() {
            EvalStatus::Completed
        } else {
            EvalStatus::Diverged
        },
        objective,
        scores: BTreeMap::new(),
        params: None,
        madds: None,
        epochs: 1,
        best_epoch: 1,
        message: None,
        folds: None,
    }
}

fn evolution(population: usize, sample_size: usize) -> AgingEvolution<MatchSpace> {
    let settings = AgingSettings {
        population,
        sample_size,
    };
    AgingEvolution::new(Arc::new(MatchSpace), settings, 1000).expect("valid settings")
}

/// Feeds hand-made results: genome i is all symbols `i % 4`.
fn observe_all(strategy: &mut AgingEvolution<MatchSpace>, objectives: &[Option<f64>]) {
    for (index, objective) in objectives.iter().enumerate() {
        let genome = vec![(index % 4) as u8; LENGTH];
        strategy.observe(index as u64, &genome, &scored(*objective));
    }
}

/// The parent chosen for the proposal after `objectives`, with proposal seed `seed`.
fn parent_after(strategy: &mut AgingEvolution<MatchSpace>, index: u64, seed: u64) -> Option<u64> {
    strategy
        .propose(index, &mut proposal_rng(seed, index))
        .parent
}

#[test]
fn the_first_population_is_sampled_and_the_oldest_member_leaves() {
    let mut strategy = evolution(3, 2);
    for index in 0..3 {
        let proposal = strategy.propose(index, &mut proposal_rng(1, index));
        assert_eq!((proposal.parent, proposal.mutation), (None, None));
    }
    observe_all(&mut strategy, &[Some(1.0), Some(9.0), Some(2.0)]);
    assert_eq!(strategy.population_indices(), vec![0, 1, 2]);
    observe_all_from(&mut strategy, 3, &[Some(0.5)]);
    assert_eq!(strategy.population_indices(), vec![1, 2, 3]);
    observe_all_from(&mut strategy, 4, &[Some(0.1)]);
    // The best member (index 1) leaves too once it is the oldest: aging, not elitism.
    assert_eq!(strategy.population_indices(), vec![2, 3, 4]);
}

fn observe_all_from(
    strategy: &mut AgingEvolution<MatchSpace>,
    first: u64,
    objectives: &[Option<f64>],
) {
    for (offset, objective) in objectives.iter().enumerate() {
        let index = first + offset as u64;
        strategy.observe(index, &vec![0; LENGTH], &scored(*objective));
    }
}

#[test]
fn the_parent_is_the_best_of_the_whole_sample() {
    let mut strategy = evolution(4, 4);
    observe_all(&mut strategy, &[Some(1.0), Some(5.0), Some(3.0), Some(2.0)]);
    for seed in 0..50 {
        let proposal = strategy.propose(4, &mut proposal_rng(seed, 4));
        assert_eq!(proposal.parent, Some(1));
        assert_eq!(proposal.mutation.as_deref(), Some("change_symbol"));
        let parent = vec![1u8; LENGTH];
        assert_eq!(
            LENGTH - matches(&proposal.genome, &parent),
            1,
            "one position changed"
        );
    }
}

#[test]
fn with_a_partial_sample_the_worst_member_is_never_a_parent() {
    // S = 2 of P = 4: each pair is equally likely; the parent is the pair's best,
    // so index 0 (worst) never wins and index 1 (best) wins half the time.
    let mut strategy = evolution(4, 2);
    observe_all(&mut strategy, &[Some(1.0), Some(5.0), Some(3.0), Some(2.0)]);
    let mut wins = [0u32; 4];
    for seed in 0..600 {
        if let Some(parent) = parent_after(&mut strategy, 4, seed) {
            wins[parent as usize] += 1;
        }
    }
    assert_eq!(wins[0], 0);
    assert!(wins[1] > 240 && wins[1] < 360, "{wins:?}");
    assert!(wins[2] > 130 && wins[2] < 270, "{wins:?}");
    assert!(wins[3] > 50 && wins[3] < 150, "{wins:?}");
}

#[test]
fn ties_go_to_the_younger_member_and_no_score_ranks_lowest() {
    let mut strategy = evolution(4, 4);
    observe_all(&mut strategy, &[None, Some(2.0), Some(2.0), None]);
    assert_eq!(parent_after(&mut strategy, 4, 7), Some(2));
    let mut unscored = evolution(2, 2);
    observe_all(&mut unscored, &[None, None]);
    assert_eq!(parent_after(&mut unscored, 2, 7), Some(1));
    let mut negative = evolution(2, 2);
    observe_all(&mut negative, &[Some(-1e300), None]);
    assert_eq!(parent_after(&mut negative, 2, 7), Some(0));
}

#[test]
fn an_empty_population_after_the_first_phase_falls_back_to_sampling() {
    // With many workers, proposal P can come before any result was observed.
    let mut strategy = evolution(2, 2);
    let proposal = strategy.propose(5, &mut proposal_rng(3, 5));
    assert_eq!((proposal.parent, proposal.mutation), (None, None));
}

#[test]
fn seed_genomes_come_first_then_their_mutants_cycle() {
    let seeds = vec![vec![0u8; LENGTH], vec![3u8; LENGTH]];
    let mut strategy = evolution(5, 2)
        .with_seed_genomes(seeds.clone())
        .expect("valid seeds");
    let proposals: Vec<_> = (0..5)
        .map(|index| strategy.propose(index, &mut proposal_rng(9, index)))
        .collect();
    assert_eq!(proposals[0].genome, seeds[0]);
    assert_eq!(proposals[1].genome, seeds[1]);
    assert_eq!(proposals[0].parent, None);
    let parents: Vec<_> = proposals[2..].iter().map(|p| p.parent).collect();
    assert_eq!(parents, vec![Some(0), Some(1), Some(0)]);
    assert_eq!(LENGTH - matches(&proposals[3].genome, &seeds[1]), 1);
    let settings = strategy.settings();
    assert_eq!(settings["seed_genomes"].as_array().map(Vec::len), Some(2));
    assert!(evolution(5, 2).with_seed_genomes(vec![]).is_err());
    assert!(evolution(5, 2).with_seed_genomes(vec![vec![9; 3]]).is_err());
}

#[test]
fn settings_are_checked_against_the_budget() {
    let space = Arc::new(MatchSpace);
    let bad = [(5, 0, 100), (5, 6, 100), (50, 5, 20)];
    for (population, sample_size, budget) in bad {
        let settings = AgingSettings {
            population,
            sample_size,
        };
        let error = AgingEvolution::new(space.clone(), settings, budget).err();
        assert!(
            matches!(error, Some(gemmule::Error::Input(_))),
            "{settings:?}"
        );
    }
    let defaults = AgingSettings::for_budget(200);
    assert_eq!(defaults.population, default_population(200));
    assert_eq!(
        defaults.sample_size,
        default_sample_size(defaults.population)
    );
    assert!(AgingEvolution::new(space, defaults, 200).is_ok());
}

#[test]
fn random_search_only_samples_fresh_genomes() {
    let mut strategy = RandomSampling::new(Arc::new(MatchSpace));
    let first = strategy.propose(0, &mut proposal_rng(5, 0));
    strategy.observe(0, &first.genome, &scored(Some(20.0)));
    let second = strategy.propose(1, &mut proposal_rng(5, 1));
    assert_eq!((second.parent, second.mutation), (None, None));
    assert_ne!(first.genome, second.genome);
    assert_eq!(strategy.name(), "random_sampling");
}

/// Runs a strategy sequentially (the scheduler with one job, minus the journal);
/// returns the objectives in order.
fn drive(
    strategy: &mut dyn Strategy<Vec<u8>>,
    run_seed: u64,
    evaluations: u64,
) -> Vec<Option<f64>> {
    let evaluator = MatchEvaluator::new(target(run_seed));
    (0..evaluations)
        .map(|index| {
            let proposal = strategy.propose(index, &mut proposal_rng(run_seed, index));
            let evaluation = evaluator.evaluate(&proposal.genome, evaluation_seed(run_seed, index));
            strategy.observe(index, &proposal.genome, &evaluation);
            evaluation.objective
        })
        .collect()
}

#[test]
fn proposals_and_mutations_are_reproducible() {
    let space = MatchSpace;
    let parent = vec![2u8; LENGTH];
    let first = space.mutate(&parent, &mut proposal_rng(11, 3));
    assert_eq!(first, space.mutate(&parent, &mut proposal_rng(11, 3)));
    let runs: Vec<_> = [4, 4, 5]
        .iter()
        .map(|&seed| drive(&mut evolution(8, 3), seed, 60))
        .collect();
    assert_eq!(runs[0], runs[1]);
    assert_ne!(runs[0], runs[2]);
}

/// Evaluations until the objective reaches `quality` (`cap + 1` if never).
fn evaluations_to_reach(
    strategy: &mut dyn Strategy<Vec<u8>>,
    run_seed: u64,
    quality: f64,
    cap: u64,
) -> u64 {
    drive(strategy, run_seed, cap)
        .iter()
        .position(|objective| objective.is_some_and(|value| value >= quality))
        .map_or(cap + 1, |position| position as u64 + 1)
}

#[test]
fn evolution_beats_random_search_in_most_seeds() {
    // Sign test: if evolution were no better than random search, each of the
    // 20 seeds would be a win with probability at most 1/2, and
    // P(wins >= 15) = (C(20,15)+C(20,16)+…+C(20,20)) / 2^20
    //               = (15504 + 4845 + 1140 + 190 + 20 + 1) / 1048576 = 0.0207 < 0.05
    // (while P(wins >= 14) = 0.0577 would not be significant at 5%).
    // A quality of 12 of 20 matches is within reach of random search
    // (P(Binomial(20, 1/4) >= 12) ~ 0.0009 per sample), so this is a real race.
    const QUALITY: f64 = 12.0;
    const CAP: u64 = 600;
    let mut wins = 0;
    let mut tally = Vec::new();
    for run_seed in 0..20 {
        let evolved = evaluations_to_reach(&mut evolution(20, 5), run_seed, QUALITY, CAP);
        let mut random = RandomSampling::new(Arc::new(MatchSpace));
        let sampled = evaluations_to_reach(&mut random, run_seed, QUALITY, CAP);
        tally.push((evolved, sampled));
        if evolved < sampled {
            wins += 1;
        }
    }
    assert!(
        wins >= 15,
        "evolution won only {wins} of 20 seeds: {tally:?}"
    );
}

fn record(index: u64, objective: Option<f64>) -> EvaluationRecord<u8> {
    EvaluationRecord {
        index,
        id: format!("g{index}"),
        genome: index as u8,
        parent: None,
        parent_id: None,
        mutation: None,
        seed: index,
        status: EvalStatus::Completed,
        objective,
        scores: BTreeMap::new(),
        params: None,
        madds: None,
        epochs: 1,
        best_epoch: 1,
        message: None,
        folds: None,
    }
}

#[test]
fn the_summary_ranks_and_traces_the_best_so_far() {
    let records: Vec<_> = [None, Some(2.0), Some(1.0), Some(3.0), Some(3.0)]
        .into_iter()
        .enumerate()
        .map(|(index, objective)| record(index as u64, objective))
        .collect();
    let summary = RunSummary::new(&records, 3);
    assert_eq!((summary.evaluations, summary.scored), (5, 4));
    assert_eq!(summary.best.as_ref().map(|r| r.index), Some(3));
    let top: Vec<u64> = summary.top.iter().map(|r| r.index).collect();
    assert_eq!(top, vec![3, 4, 1]);
    assert_eq!(
        summary.best_so_far,
        vec![None, Some(2.0), Some(2.0), Some(3.0), Some(3.0)]
    );
}

#[test]
fn the_cut_bar_is_the_worst_scored_member_of_a_full_population() {
    // The rule documented in docs/strategies.md ("The learning-curve cut").
    let mut strategy = evolution(3, 2);
    assert_eq!(strategy.cut_bar(), None, "empty population");
    observe_all(&mut strategy, &[Some(0.7), None]);
    assert_eq!(strategy.cut_bar(), None, "population not full yet");
    let mut full = evolution(3, 2);
    observe_all(&mut full, &[Some(0.7), None, Some(0.9)]);
    assert_eq!(full.cut_bar(), Some(0.7), "unscored members are left out");
    let mut unscored = evolution(2, 1);
    observe_all(&mut unscored, &[None, None]);
    assert_eq!(unscored.cut_bar(), None, "no scored member, no bar");
    // The oldest member leaves: after 0.7 ages out the bar rises.
    let mut aging = evolution(2, 1);
    observe_all(&mut aging, &[Some(0.7), Some(0.9), Some(0.8)]);
    assert_eq!(aging.cut_bar(), Some(0.8));
    let random: RandomSampling<MatchSpace> = RandomSampling::new(Arc::new(MatchSpace));
    assert_eq!(random.cut_bar(), None, "random search keeps no population");
}
