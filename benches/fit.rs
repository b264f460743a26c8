//! Fitting throughput: `cargo bench --bench fit` fits the six free parameters
//! of patterns/ribbon_fit.toml to the invented wild-type and three-mutant
//! boundaries in demo-data/fit (each evaluation simulates four genotypes),
//! with its polish and the profile of every parameter, and prints
//! evaluations per second, total time and the final objective.

use std::time::Instant;

fn main() {
    let model = anlage::model::Model::load(std::path::Path::new("patterns/ribbon_fit.toml")).expect("demo model");
    let problem = anlage::fit::FitProblem::from_model(&model).expect("demo fit");

    let start = Instant::now();
    let r = anlage::fit::fit(&problem, true, &mut |_, _| {});
    let seconds = start.elapsed().as_secs_f64();
    println!(
        "{} parameters, {} genotypes: {} evaluations (global search {}, the rest polish and profiles) in {seconds:.1} s ({:.0}/s, {} threads); objective {:.3} on {} residuals",
        problem.params.len(),
        problem.genotypes.len(),
        r.evaluations,
        r.search.evaluations,
        r.evaluations as f64 / seconds,
        rayon::current_num_threads(),
        r.objective,
        r.residuals.len()
    );
}
