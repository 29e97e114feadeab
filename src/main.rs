#[allow(dead_code)]
mod cli;

fn main() {}
