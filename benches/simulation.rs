//! The assembly simulation: contributor-draws per second for a 10-contributor stack, all cores.
//! Compare with `benches/simulation_reference.py` (the same simulation in numpy), which also
//! times the `capstack` binary on the same stack in the same run.

use capstack::stack::file::{Assumptions, Distribution, Requirement, Sampling};
use capstack::stack::model::{ContributorModel, PartGroup, StackModel};
use capstack::stack::simulate::{simulate, SimulationSettings};
use criterion::{criterion_group, criterion_main, Criterion, Throughput};

const SAMPLES: u64 = 10_000_000;

fn contributor(i: usize, sd: f64, distribution: Option<Distribution>) -> ContributorModel {
    ContributorModel {
        name: format!("c{i}"),
        sensitivity: if i % 2 == 0 { 1.0 } else { -1.0 },
        nominal: 0.0,
        lower_limit: -0.03,
        upper_limit: 0.03,
        mean: 0.0,
        sd,
        n: None,
        distribution,
        sampling: distribution.is_none().then_some(Sampling::Parts),
        ppk: None,
        ppk_lower: None,
        skewness: None,
        normality_p: None,
        ..Default::default()
    }
}

fn stack(contributors: Vec<ContributorModel>, part_groups: Vec<PartGroup>) -> StackModel {
    let k = contributors.len();
    let mut covariance = vec![vec![0.0; k]; k];
    for (i, c) in contributors.iter().enumerate() {
        covariance[i][i] = c.sd * c.sd;
    }
    StackModel {
        requirement: Requirement {
            name: "gap".into(),
            lsl: Some(-0.1),
            usl: Some(0.1),
            unit: None,
        },
        assumptions: Assumptions {
            cp: 1.0,
            safety_factor: 1.0,
        },
        contributors,
        covariance,
        paired: Vec::new(),
        part_groups,
    }
}

/// Ten stated normal contributors: the case `simulation_reference.py` writes in numpy.
fn ten_normal() -> StackModel {
    stack(
        (0..10)
            .map(|i| contributor(i, 0.006 + 0.0005 * i as f64, Some(Distribution::Normal)))
            .collect(),
        Vec::new(),
    )
}

/// Four contributors resampled from 50 measured parts (two files), three uniform, three normal.
fn mixed() -> StackModel {
    let mut cs = Vec::new();
    for i in 0..10 {
        let d = match i {
            0..=3 => None,
            4..=6 => Some(Distribution::Uniform),
            _ => Some(Distribution::Normal),
        };
        cs.push(contributor(i, 0.008, d));
    }
    let column = |phase: f64| -> Vec<f64> {
        (0..50)
            .map(|j| 0.01 * (j as f64 * 0.7 + phase).sin())
            .collect()
    };
    let groups = vec![
        PartGroup {
            source: "a.csv".into(),
            members: vec![0, 1],
            columns: vec![column(0.0), column(0.3)],
        },
        PartGroup {
            source: "b.csv".into(),
            members: vec![2, 3],
            columns: vec![column(1.0), column(2.0)],
        },
    ];
    stack(cs, groups)
}

fn simulation(c: &mut Criterion) {
    let settings = SimulationSettings {
        samples: SAMPLES,
        seed: 1,
        precision: None,
        max_samples: SAMPLES,
    };
    let mut g = c.benchmark_group("simulation");
    g.sample_size(10);
    g.throughput(Throughput::Elements(SAMPLES * 10));
    let normal = ten_normal();
    g.bench_function("10 normal contributors, 10^7 assemblies", |b| {
        b.iter(|| simulate(&normal, &settings, &mut |_, _| {}))
    });
    let mixed = mixed();
    g.bench_function("4 parts + 3 uniform + 3 normal, 10^7 assemblies", |b| {
        b.iter(|| simulate(&mixed, &settings, &mut |_, _| {}))
    });
    g.finish();
}

criterion_group!(benches, simulation);
criterion_main!(benches);
