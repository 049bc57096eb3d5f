//! The `collatio` command: a thin layer over the library.

#![forbid(unsafe_code)]

mod cli;

fn main() {
    std::process::exit(cli::main());
}
