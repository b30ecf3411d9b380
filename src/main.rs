//! Command-line entry point (thin: parses arguments and calls the library).

fn main() -> anyhow::Result<()> {
    Ok(())
}
