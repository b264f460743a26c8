//! Problems with known answers, shared by tests and benches, written as model
//! text so they go through the same parser and validator as users' files.

use std::fmt::Write;
use std::path::Path;

use crate::model::{Model, ModelError};

/// Parses model text that this module generated.
///
/// # Errors
/// [`ModelError`] if the text is invalid (a bug in the generator).
pub fn parse(text: &str, name: &str) -> Result<Model, ModelError> {
    Model::from_toml(text, Path::new(name))
}

fn floats(v: &[f64]) -> String {
    let parts: Vec<String> = v.iter().map(|x| format!("{x:e}")).collect();
    format!("[{}]", parts.join(", "))
}

/// One non-reacting gene diffusing (D µm²/min) on a grid with spacing 1 µm from
/// `initial` (one value per nucleus), fixed step `dt`, until `until` min.
pub fn pure_diffusion(nuclei: &[usize], edges: &str, d: f64, initial: &[f64], dt: f64, until: f64) -> String {
    let dims: Vec<String> = nuclei.iter().map(|n| n.to_string()).collect();
    format!(
        "[tissue]\nnuclei = [{}]\nspacing_um = 1.0\nedges = \"{edges}\"\n\
         [clock]\nuntil_min = {until:?}\nstep_min = {dt:?}\nsnapshot_every_min = {until:?}\n\
         [[gene]]\nname = \"solute\"\nproduction = 0.0\ndecay = 0.0\ndiffusion = {d:?}\ninitial_profile = {}\n",
        dims.join(", "),
        floats(initial)
    )
}

/// Peer problem P1 (../shared/peer/peer_numpy.py): a row of `n` nuclei on
/// [0, 1] (h = 1/n), genes A–D with all-to-all Hill repression (n = 2) under
/// two opposing exponential gradients, SBDF2 with dt = 0.01 for `steps` steps.
pub fn peer_p1(n: usize, steps: usize) -> String {
    const GENES: [&str; 4] = ["A", "B", "C", "D"];
    const V: [f64; 4] = [1.0, 0.9, 0.8, 1.1];
    const D: [f64; 4] = [4e-5, 6e-5, 5e-5, 3e-5];
    // K[target][repressor]; 0 on the diagonal.
    const K: [[f64; 4]; 4] = [[0.0, 0.5, 0.1, 0.1], [0.15, 0.0, 0.3, 0.1], [0.1, 0.3, 0.0, 0.15], [0.1, 0.1, 0.5, 0.0]];
    // Input of each gene: (gradient, threshold).
    const INPUT: [(&str, f64); 4] = [("M1", 0.5), ("M1", 0.15), ("M2", 0.15), ("M2", 0.5)];
    let dt = 0.01;
    let until = dt * steps as f64;
    let mut s = format!(
        "title = \"peer P1\"\n[tissue]\nnuclei = [{n}]\nspacing_um = {h:?}\n\
         [clock]\nuntil_min = {until:?}\nstep_min = {dt:?}\nsnapshot_every_min = {until:?}\n\
         [[gradient]]\nname = \"M1\"\nshape = \"exponential\"\nfrom = \"left\"\npeak = 1.0\ndecay_length_um = 0.2\n\
         [[gradient]]\nname = \"M2\"\nshape = \"exponential\"\nfrom = \"right\"\npeak = 1.0\ndecay_length_um = 0.15\n",
        h = 1.0 / n as f64
    );
    for (g, name) in GENES.iter().enumerate() {
        let _ =
            write!(s, "[[gene]]\nname = \"{name}\"\nproduction = {:?}\ndecay = 1.0\ndiffusion = {:?}\n", V[g], D[g]);
    }
    s.push_str("[circuit]\nkinetics = \"hill\"\n");
    for (g, name) in GENES.iter().enumerate() {
        let (m, th) = INPUT[g];
        let _ = write!(
            s,
            "[[circuit.link]]\nfrom = \"{m}\"\nto = \"{name}\"\nsign = \"+\"\nthreshold = {th:?}\nhill = 2\n"
        );
        for (j, rep) in GENES.iter().enumerate() {
            if j != g {
                let _ = write!(
                    s,
                    "[[circuit.link]]\nfrom = \"{rep}\"\nto = \"{name}\"\nsign = \"-\"\nthreshold = {:?}\nhill = 2\n",
                    K[g][j]
                );
            }
        }
    }
    s
}

/// [`peer_p1`] with every gene's rate written as an expression (the same
/// equations), to compare compiled expressions with the built-in Hill law.
pub fn peer_p1_as_rates(n: usize, steps: usize) -> String {
    let hill = peer_p1(n, steps);
    let model = parse(&hill, "p1.toml").expect("P1 is valid");
    let mut text = hill.split("[circuit]").next().expect("has a circuit").to_string();
    for (g, gene) in model.genes.iter().enumerate() {
        let mut act = String::new();
        let mut rep = String::new();
        for l in model.circuit.links.iter().filter(|l| l.to == g) {
            let from = match l.from {
                crate::model::Regulator::Gene(j) => model.genes[j].name.clone(),
                crate::model::Regulator::Gradient(k) => model.gradients[k].name.clone(),
            };
            if let crate::model::LinkEffect::Hill { activates, threshold, .. } = l.effect {
                if activates {
                    act = format!("hill({from}, {threshold:?}, 2)");
                } else {
                    rep.push_str(&format!(" / (1 + ({from} / {threshold:?})^2)"));
                }
            }
        }
        let line = format!("rate = \"{:?} * {act}{rep} - {:?} * {}\"\n", gene.production, gene.decay, gene.name);
        let marker = format!("name = \"{}\"\n", gene.name);
        text = text.replacen(&marker, &format!("{marker}{line}"), 1);
    }
    text + "[circuit]\nkinetics = \"rates\"\n"
}

/// [`peer_p1`] recording `snapshots` evenly spaced snapshots after the start.
pub fn peer_p1_recorded(n: usize, steps: usize, snapshots: usize) -> String {
    let until = 0.01 * steps as f64;
    peer_p1(n, steps).replace(
        &format!("snapshot_every_min = {until:?}"),
        &format!("snapshot_every_min = {:?}", until / snapshots as f64),
    )
}

/// A sheet of `n × n` nuclei (5 µm apart) running the ribbon's toggle switch
/// with fixed step 0.1 min for `steps` steps: the 2D benchmark.
pub fn toggle_sheet(n: usize, steps: usize) -> String {
    let until = 0.1 * steps as f64;
    format!(
        "[tissue]\nnuclei = [{n}, {n}]\nspacing_um = 5.0\n\
         [clock]\nuntil_min = {until:?}\nstep_min = 0.1\nsnapshot_every_min = {until:?}\n\
         [[gradient]]\nname = \"head\"\nshape = \"exponential\"\nfrom = \"left\"\npeak = 1.0\ndecay_length_um = {lam:?}\n\
         [[gene]]\nname = \"amber\"\nproduction = 1.0\ndecay = 0.1\ndiffusion = 2.0\ninitial_noise = 0.2\n\
         [[gene]]\nname = \"cobalt\"\nproduction = 0.8\ndecay = 0.1\ndiffusion = 2.0\ninitial_noise = 0.2\n\
         [circuit]\nkinetics = \"hill\"\n\
         [[circuit.link]]\nfrom = \"head\"\nto = \"amber\"\nsign = \"+\"\nthreshold = 0.1\nhill = 2\n\
         [[circuit.link]]\nfrom = \"cobalt\"\nto = \"amber\"\nsign = \"-\"\nthreshold = 2.0\nhill = 4\n\
         [[circuit.link]]\nfrom = \"amber\"\nto = \"cobalt\"\nsign = \"-\"\nthreshold = 2.0\nhill = 4\n",
        lam = 1.5 * n as f64
    )
}

/// [`toggle_sheet`] recording `frames` snapshots after the start (one every 10 steps).
pub fn toggle_sheet_movie(n: usize, frames: usize) -> String {
    let until = frames as f64;
    toggle_sheet(n, 10 * frames).replace(&format!("snapshot_every_min = {until:?}"), "snapshot_every_min = 1.0")
}

/// The peer's pseudo-random unit number ξ(k) = (splitmix64(k) >> 11)·2⁻⁵³
/// (Steele, Lea & Flood 2014, OOPSLA, "Fast splittable pseudorandom number
/// generators"; the finaliser constants as in the peer's docstring).
pub fn splitmix_unit(k: u64) -> f64 {
    let mut z = k.wrapping_add(0x9E37_79B9_7F4A_7C15);
    z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
    z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
    z ^= z >> 31;
    (z >> 11) as f64 * (-53f64).exp2()
}

/// Peer problem P2 (../shared/peer/peer_numpy.py): Schnakenberg kinetics
/// (a = 0.1, b = 0.9, D_u = 1, D_v = 20) on an `n × n` sheet with h = 1 and
/// sealed edges, dt = 0.1 for `steps` steps, from the peer's splitmix64 start.
/// Writes the start as `p2_{n}_u.npy` and `p2_{n}_v.npy` in `dir` and returns
/// the model text (which reads them).
///
/// # Errors
/// If the files cannot be written.
pub fn write_peer_p2(dir: &Path, n: usize, steps: usize) -> std::io::Result<String> {
    use ndarray_npy::WriteNpyExt;
    let cells = (n * n) as u64;
    for (name, base, offset) in [("u", 1.0, 0), ("v", 0.9, cells)] {
        let start = ndarray::Array2::from_shape_fn((n, n), |(r, c)| {
            base + 0.01 * (2.0 * splitmix_unit((r * n + c) as u64 + offset) - 1.0)
        });
        let file = std::fs::File::create(dir.join(format!("p2_{n}_{name}.npy")))?;
        start.write_npy(std::io::BufWriter::new(file)).map_err(std::io::Error::other)?;
    }
    let until = 0.1 * steps as f64;
    Ok(format!(
        "title = \"peer P2\"\n[tissue]\nnuclei = [{n}, {n}]\nspacing_um = 1.0\n\
         [clock]\nuntil_min = {until:?}\nstep_min = 0.1\nsnapshot_every_min = {until:?}\n\
         [[gene]]\nname = \"u\"\nrate = \"a - u + u^2 * v\"\ndiffusion = 1.0\ninitial_file = \"p2_{n}_u.npy\"\n\
         [[gene]]\nname = \"v\"\nrate = \"b - u^2 * v\"\ndiffusion = 20.0\ninitial_file = \"p2_{n}_v.npy\"\n\
         [circuit]\nkinetics = \"rates\"\nparameters = {{ a = 0.1, b = 0.9 }}\n"
    ))
}

/// Sum of every value of a state: the peer's checksum.
pub fn checksum(state: &ndarray::Array2<f64>) -> f64 {
    state.iter().sum()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn generated_models_are_valid() {
        parse(&peer_p1(50, 10), "p1.toml").unwrap();
        parse(&toggle_sheet(16, 10), "sheet.toml").unwrap();
        parse(&pure_diffusion(&[4], "sealed", 1.0, &[1.0, 2.0, 3.0, 4.0], 0.1, 1.0), "d.toml").unwrap();
    }
}
