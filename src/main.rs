//! quenchwise binary: parse the command line, run, print the error chain once,
//! and set the exit code (0 fine, 2 bad input, 1 internal error).

use clap::Parser;

fn main() {
    let cli = quenchwise::cli::Cli::parse();
    if let Err(err) = quenchwise::cli::run(cli) {
        let mut msg = String::new();
        for (k, cause) in err.chain().enumerate() {
            let text = cause.to_string();
            if k == 0 {
                msg.push_str(&text);
            } else if !msg.contains(&text) {
                msg.push_str(&format!(": {text}"));
            }
        }
        eprintln!("quenchwise: {msg}");
        std::process::exit(quenchwise::cli::exit_code(&err));
    }
}
