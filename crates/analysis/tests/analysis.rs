//! The analysis against sources outside the project: the closed form of first-order
//! kinetics, the sum of a species' production terms (the definition of the net production
//! rate), conservation of atoms, the DOT grammar (the SVG drawing of a flux graph is tested
//! in stoik-plot).

use std::path::PathBuf;
use stoik_analysis::{
    element_index, element_transfers, flux_graph, species_budget, species_index, step_rates,
    step_rates_at_state, to_dot, AnalysisError, Span, StepRates, DEFAULT_THRESHOLD,
};
use stoik_kinetics::Kinetics;
use stoik_scenario::RunPlan;
use stoik_testsupport::{mechanisms_dir, Rng};

/// A fresh folder for files of test `name`.
fn scratch(name: &str) -> PathBuf {
    let dir = std::env::temp_dir().join(format!("stoik-analysis-{}-{name}", std::process::id()));
    std::fs::create_dir_all(&dir).expect("scratch folder");
    dir
}

/// A -> B with k = 2.5 1/s, c_A(0) = 3 mol/m3, isothermal, to 2 s, tight tolerances.
const K: f64 = 2.5;
const C0: f64 = 3.0;

fn first_order_plan() -> RunPlan {
    let dir = scratch("first-order");
    std::fs::write(
        dir.join("a-to-b.toml"),
        "stoik_mechanism = 1\n[units]\namount = \"mol\"\nlength = \"m\"\ntime = \"s\"\n\
         [[species]]\nname = \"A\"\n[[species]]\nname = \"B\"\n\
         [[step]]\nequation = \"A -> B\"\nforward = { prefactor = 2.5 }\n",
    )
    .expect("mechanism written");
    let scenario = dir.join("a-to-b.scenario.toml");
    std::fs::write(
        &scenario,
        "stoik_scenario = 1\nmechanism = \"a-to-b.toml\"\n[reactor]\ntemperature = \"300 K\"\n\
         [initial]\nconcentrations = { A = 3.0 }\n[output]\nend_time = \"2 s\"\n\
         grid = { spacing = \"linear\", points = 3 }\n\
         [solver]\nrelative_tolerance = 1e-11\nabsolute_tolerance = 1e-16\n",
    )
    .expect("scenario written");
    RunPlan::load(&scenario).expect("plan loads")
}

fn hydrogen_plan() -> RunPlan {
    RunPlan::load(&mechanisms_dir().join("hydrogen-oxygen.scenario.toml")).expect("demo loads")
}

#[test]
fn first_order_rate_of_production_follows_the_closed_form() {
    // First-order kinetics, textbook closed form (e.g. P. Atkins and J. de Paula, Physical
    // Chemistry, the integrated first-order rate law): c_A = c0 exp(-k t), so B is made at
    // k c0 exp(-k t), and over [t1, t2] by c0 (exp(-k t1) - exp(-k t2)).
    let plan = first_order_plan();
    let mechanism = plan.mechanism().clone();
    let b = species_index(&mechanism, "B").unwrap();
    let a = species_index(&mechanism, "A").unwrap();
    let (t, t1, t2) = (0.3, 0.2, 0.9);
    let spans = [
        Span::Instant(t),
        Span::Window {
            from_s: t1,
            to_s: t2,
        },
    ];
    let rates = step_rates(&plan, &spans).unwrap();
    let at = species_budget(&mechanism, &rates[0], b);
    let expected = K * C0 * (-K * t).exp();
    assert!(
        (at.net - expected).abs() <= 1e-8 * expected,
        "{} vs {expected}",
        at.net
    );
    assert_eq!(at.production.len(), 1);
    assert_eq!(at.production[0].share, 1.0);
    assert!(at.consumption.is_empty());
    let over = species_budget(&mechanism, &rates[1], b);
    let expected = C0 * ((-K * t1).exp() - (-K * t2).exp());
    assert!(
        (over.net - expected).abs() <= 1e-8 * expected,
        "{} vs {expected}",
        over.net
    );
    // A is consumed by the same amount (one A per B).
    let a_over = species_budget(&mechanism, &rates[1], a);
    assert_eq!(a_over.consumption_total, over.production_total);
    assert_eq!(a_over.net, -over.net);
}

#[test]
fn rates_of_production_add_up_to_the_net_production_rate() {
    // Definition of the net production rate w_i = sum_j nu_ij q_j (any kinetics text),
    // evaluated independently by Kinetics::production_rates (compensated summation). The
    // two sums differ only by rounding: within 1e-12 of the sum of the terms' magnitudes.
    let plan = hydrogen_plan();
    let mechanism = plan.mechanism().clone();
    let kinetics = Kinetics::compile(&mechanism).unwrap();
    let outcome = plan.run().unwrap();
    let profiles = outcome.profiles();
    let mut rng = Rng::new(14);
    let mut states: Vec<(f64, f64, Vec<f64>)> = [200, 229, 260, 1000]
        .iter()
        .map(|&row| {
            (
                profiles.times_s[row],
                profiles.temperatures_k[row],
                profiles.concentrations_mol_per_m3[row].clone(),
            )
        })
        .collect();
    // Random states as well: every species present, temperatures 800 to 2500 K.
    for _ in 0..20 {
        let c: Vec<f64> = (0..kinetics.n_species())
            .map(|_| 10f64.powf(-6.0 + 7.0 * rng.uniform()))
            .collect();
        states.push((0.0, 800.0 + 1700.0 * rng.uniform(), c));
    }
    let mut w = vec![0.0; kinetics.n_species()];
    for (t, temperature_k, c) in states {
        let q = step_rates_at_state(&kinetics, plan.model(), t, temperature_k, &c);
        let rates = StepRates {
            span: Span::Instant(t),
            rates: q,
            temperature_k,
        };
        let k = kinetics.rate_constants(temperature_k);
        kinetics.production_rates(&k, &c, &mut w);
        for (i, &wi) in w.iter().enumerate() {
            let budget = species_budget(&mechanism, &rates, i);
            let scale: f64 = budget.all.iter().map(|x| x.value.abs()).sum();
            assert!(
                (budget.net - wi).abs() <= 1e-12 * scale.max(f64::MIN_POSITIVE),
                "{}: {} vs {wi} (scale {scale})",
                mechanism.species[i].name,
                budget.net
            );
            assert!(
                (budget.production_total - budget.consumption_total - budget.net).abs()
                    <= 1e-12 * scale.max(f64::MIN_POSITIVE)
            );
            // Shares of each side add up to 1 (or the side is empty).
            for side in [&budget.production, &budget.consumption] {
                if !side.is_empty() {
                    let s: f64 = side.iter().map(|c| c.share).sum();
                    assert!((s - 1.0).abs() < 1e-12, "{s}");
                }
            }
        }
    }
}

#[test]
fn window_integrals_of_the_hydrogen_run_match_the_profile_change() {
    // Integrating dc_i/dt = w_i over [t1, t2] must give c_i(t2) - c_i(t1) (fundamental
    // theorem of calculus) for a constant-volume reactor without box terms; the run's own
    // profile at t1 and t2 is the reference, to the integration tolerance.
    let plan = hydrogen_plan();
    let mechanism = plan.mechanism().clone();
    let (t1, t2) = (1.0e-4, 3.0e-4);
    let rates = step_rates(
        &plan,
        &[
            Span::Instant(t1),
            Span::Instant(t2),
            Span::Window {
                from_s: t1,
                to_s: t2,
            },
        ],
    )
    .unwrap();
    let mut plan2 = plan.clone();
    plan2
        .set_output_times(stoik_scenario::OutputTimes::List(vec![t1, t2]))
        .unwrap();
    let outcome = plan2.run().unwrap();
    let p = outcome.profiles();
    let row = |t: f64| p.times_s.iter().position(|&x| x == t).unwrap();
    for name in ["H2", "O2", "H2O", "OH", "H", "O"] {
        let i = species_index(&mechanism, name).unwrap();
        let change =
            p.concentrations_mol_per_m3[row(t2)][i] - p.concentrations_mol_per_m3[row(t1)][i];
        let budget = species_budget(&mechanism, &rates[2], i);
        let scale: f64 = p.concentrations_mol_per_m3[row(t2)]
            .iter()
            .chain(&p.concentrations_mol_per_m3[row(t1)])
            .fold(0.0, |m: f64, &x| m.max(x));
        assert!(
            (budget.net - change).abs() <= 1e-6 * scale,
            "{name}: {} vs {change}",
            budget.net
        );
    }
    assert!(rates[1].temperature_k > rates[0].temperature_k);
}

#[test]
fn element_flux_out_of_each_species_is_its_consumption_of_the_element() {
    // Conservation of atoms (Lavoisier): through each step, the atoms a species passes on
    // are the atoms it loses, nu_a n_E(a) q_j; over all steps, what flows in minus what
    // flows out is n_E(a) w_a, with w_a from Kinetics::production_rates.
    let plan = hydrogen_plan();
    let mechanism = plan.mechanism().clone();
    let kinetics = Kinetics::compile(&mechanism).unwrap();
    let rates = step_rates(
        &plan,
        &[
            Span::Instant(2.0e-4),
            Span::Window {
                from_s: 0.0,
                to_s: 2.0e-3,
            },
        ],
    )
    .unwrap();
    let outcome = {
        let mut p = plan.clone();
        p.set_output_times(stoik_scenario::OutputTimes::List(vec![2.0e-4]))
            .unwrap();
        p.run().unwrap()
    };
    let profiles = outcome.profiles();
    let row = profiles.times_s.iter().position(|&t| t == 2.0e-4).unwrap();
    let mut w = vec![0.0; kinetics.n_species()];
    kinetics.production_rates(
        &kinetics.rate_constants(profiles.temperatures_k[row]),
        &profiles.concentrations_mol_per_m3[row],
        &mut w,
    );
    for symbol in ["H", "O"] {
        let e = element_index(&mechanism, symbol).unwrap();
        let atoms = |i: usize| -> f64 {
            mechanism.species[i]
                .composition
                .as_ref()
                .unwrap()
                .iter()
                .filter(|&&(x, _)| x == e)
                .map(|&(_, n)| n)
                .sum()
        };
        for (span, r) in rates.iter().enumerate() {
            let transfers = element_transfers(&mechanism, e, &r.rates).unwrap();
            // Per step and giver: the flow out is its loss of the element through the step.
            for (j, step) in mechanism.steps.iter().enumerate() {
                let q = r.rates[j];
                let givers = if q >= 0.0 {
                    &step.reactants
                } else {
                    &step.products
                };
                for g in givers {
                    let lost = g.coefficient * atoms(g.species) * q.abs();
                    let out: f64 = transfers
                        .iter()
                        .filter(|t| t.step == j && t.from == g.species)
                        .map(|t| t.rate)
                        .sum();
                    assert!(
                        (out - lost).abs() <= 1e-12 * lost.abs().max(f64::MIN_POSITIVE),
                        "{symbol}, step {j}, {}: {out} vs {lost}",
                        mechanism.species[g.species].name
                    );
                }
            }
            // Over all steps at the instant: in - out = n_E(a) w_a.
            if span == 0 {
                for (a, &wa) in w.iter().enumerate() {
                    let inflow: f64 = transfers.iter().filter(|t| t.to == a).map(|t| t.rate).sum();
                    let outflow: f64 = transfers
                        .iter()
                        .filter(|t| t.from == a)
                        .map(|t| t.rate)
                        .sum();
                    let scale = inflow.max(outflow).max(f64::MIN_POSITIVE);
                    assert!(
                        (inflow - outflow - atoms(a) * wa).abs() <= 1e-10 * scale,
                        "{symbol}, {}: {inflow} - {outflow} vs {}",
                        mechanism.species[a].name,
                        atoms(a) * wa
                    );
                }
            }
        }
    }
}

#[test]
fn the_flux_graph_is_normalized_and_cut_at_its_threshold() {
    let plan = hydrogen_plan();
    let mechanism = plan.mechanism().clone();
    let rates = step_rates(&plan, &[Span::Instant(2.0e-4)]).unwrap();
    let h = element_index(&mechanism, "H").unwrap();
    let all = flux_graph(&mechanism, h, &rates[0], 0.0).unwrap();
    let cut = flux_graph(&mechanism, h, &rates[0], 0.05).unwrap();
    assert_eq!(all.edges[0].relative, 1.0);
    assert_eq!(all.edges[0].flux, all.largest);
    assert!(cut.edges.iter().all(|e| e.relative >= 0.05));
    assert_eq!(
        cut.edges.len(),
        all.edges.iter().filter(|e| e.relative >= 0.05).count()
    );
    assert!(cut.edges.len() < all.edges.len());
    // Each edge's flux is the sum of its steps' signed parts.
    for e in &all.edges {
        let s: f64 = e.steps.iter().map(|&(_, v)| v).sum();
        assert!((s - e.flux).abs() <= 1e-12 * e.flux);
        assert_ne!(e.from, e.to);
    }
    assert!(matches!(
        flux_graph(&mechanism, h, &rates[0], 1.5),
        Err(AnalysisError::BadThreshold(_))
    ));
}

#[test]
fn the_dot_output_follows_the_dot_grammar() {
    // The DOT language (graphviz.org/doc/info/lang.html): `digraph ID { stmt_list }`,
    // node statements `ID;`, edge statements `ID -> ID [a_list];`, IDs double-quoted.
    let plan = hydrogen_plan();
    let mechanism = plan.mechanism().clone();
    let rates = step_rates(&plan, &[Span::Instant(2.0e-4)]).unwrap();
    let graph = flux_graph(
        &mechanism,
        element_index(&mechanism, "H").unwrap(),
        &rates[0],
        DEFAULT_THRESHOLD,
    )
    .unwrap();
    let dot = to_dot(&graph, &mechanism);
    let lines: Vec<&str> = dot.lines().collect();
    assert!(lines[0].starts_with("digraph \"") && lines[0].ends_with('{'));
    assert_eq!(*lines.last().unwrap(), "}");
    let mut nodes = Vec::new();
    let mut edges = 0;
    for line in &lines[1..lines.len() - 1] {
        let line = line.trim();
        assert!(line.ends_with(';'), "{line}");
        if let Some(rest) = line.strip_prefix('"') {
            let (first, after) = rest.split_once('"').expect("closing quote");
            if let Some(edge) = after.strip_prefix(" -> \"") {
                let (second, attrs) = edge.split_once('"').expect("closing quote");
                assert!(nodes.contains(&first.to_string()), "{first} not a node");
                assert!(nodes.contains(&second.to_string()), "{second} not a node");
                assert!(attrs.starts_with(" [") && attrs.ends_with("];"), "{attrs}");
                assert!(attrs.contains("penwidth=") && attrs.contains("label=\""));
                edges += 1;
            } else {
                assert_eq!(after, ";");
                nodes.push(first.to_string());
            }
        }
    }
    assert_eq!(edges, graph.edges.len());
    assert_eq!(nodes.len(), graph.nodes.len());
    assert!(edges > 3);
    for n in &nodes {
        assert!(mechanism.species_index(n).is_some(), "{n}");
    }
}

#[test]
fn bad_requests_are_refused_with_the_value_named() {
    let plan = hydrogen_plan();
    let mechanism = plan.mechanism();
    match species_index(mechanism, "oh") {
        Err(e @ AnalysisError::UnknownSpecies { .. }) => {
            assert!(e.to_string().contains("did you mean `OH`"), "{e}")
        }
        other => panic!("{other:?}"),
    }
    match element_index(mechanism, "C") {
        Err(e @ AnalysisError::UnknownElement { .. }) => {
            assert!(e.to_string().contains("`C`"), "{e}")
        }
        other => panic!("{other:?}"),
    }
    assert!(matches!(
        step_rates(&plan, &[Span::Instant(1.0)]),
        Err(AnalysisError::TimeOutsideRun { .. })
    ));
    for (from_s, to_s) in [(2e-4, 1e-4), (1e-4, 1e-4), (-1e-4, 1e-4), (0.0, 3e-3)] {
        assert!(matches!(
            step_rates(&plan, &[Span::Window { from_s, to_s }]),
            Err(AnalysisError::BadWindow { .. })
        ));
    }
    assert!(matches!(
        step_rates(&plan, &[]),
        Err(AnalysisError::NothingAsked)
    ));
}

#[test]
fn a_watched_step_rate_of_a_missing_step_or_a_reversed_window_is_refused() {
    // The reactor's own argument checks, reached through a plan: nothing is integrated.
    use stoik_reactor::{Quantity, ReactorError, Watch};
    use stoik_scenario::ScenarioError;
    let mut plan = first_order_plan();
    plan.add_watches(&[Watch::Integral(Quantity::StepRate(1))]);
    assert!(matches!(
        plan.run(),
        Err(ScenarioError::Reactor(ReactorError::StepOutOfRange {
            step: 1,
            n_steps: 1
        }))
    ));
    let mut plan = first_order_plan();
    plan.add_watches(&[Watch::WindowIntegral {
        quantity: Quantity::StepRate(0),
        from_s: 0.5,
        to_s: 0.1,
    }]);
    assert!(matches!(
        plan.run(),
        Err(ScenarioError::Reactor(ReactorError::BadWindow { .. }))
    ));
}
