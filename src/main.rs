fn main() {
    std::process::exit(trialdesk::cli::main());
}
