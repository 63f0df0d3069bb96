//! The `strata` binary: parse, run, and turn an error into one line and an exit code.

fn main() {
    match strata::cli::run() {
        Ok(()) => std::process::exit(strata::error::exit_code::SUCCESS),
        Err(error) => {
            eprintln!("strata: error: {}", error_chain(&error));
            std::process::exit(error.exit_code());
        }
    }
}

/// The error and its sources on one line, separated by ": ".
fn error_chain(error: &dyn std::error::Error) -> String {
    let mut text = error.to_string();
    let mut source = error.source();
    while let Some(cause) = source {
        let cause_text = cause.to_string();
        if !text.contains(&cause_text) {
            text.push_str(": ");
            text.push_str(&cause_text);
        }
        source = cause.source();
    }
    text
}
