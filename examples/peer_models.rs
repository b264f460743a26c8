//! Writes the peer problems (../shared/peer/peer_numpy.py) as anlage model
//! files: `cargo run --release --example peer_models -- DIR NUCLEI... `.
//! Each NUCLEI is `p1:N:STEPS` or `p2:N:STEPS`; P2 also gets its initial
//! state as two NPY files beside the model.

use std::path::PathBuf;

fn main() -> anyhow::Result<()> {
    let mut args = std::env::args().skip(1);
    let dir = PathBuf::from(args.next().ok_or_else(|| anyhow::anyhow!("usage: peer_models DIR CASE..."))?);
    std::fs::create_dir_all(&dir)?;
    for case in args {
        let parts: Vec<&str> = case.split(':').collect();
        let [problem, n, steps] = parts[..] else { anyhow::bail!("case `{case}`: write p1:N:STEPS or p2:N:STEPS") };
        let (n, steps): (usize, usize) = (n.parse()?, steps.parse()?);
        let name = format!("{problem}_{n}_{steps}.toml");
        let text = match problem {
            "p1" => anlage::reference::peer_p1(n, steps),
            "p2" => anlage::reference::write_peer_p2(&dir, n, steps)?,
            _ => anyhow::bail!("case `{case}`: the problem is p1 or p2"),
        };
        std::fs::write(dir.join(&name), text)?;
        println!("{}", dir.join(&name).display());
    }
    Ok(())
}
