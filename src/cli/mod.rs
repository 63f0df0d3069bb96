//! The command line: clap definition, subcommands, terminal output.
