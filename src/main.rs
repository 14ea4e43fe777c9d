use clap::Parser;

use bandsaw::cli::{self, Cli, Command};
use bandsaw::config::Config;
use bandsaw::server::Application;

fn main() {
    let args = Cli::parse();
    match args.command {
        Some(Command::Interval(a)) => std::process::exit(cli::interval(&a)),
        Some(Command::Check(a)) => std::process::exit(bandsaw::check::run(&a)),
        Some(Command::Bench(a)) => std::process::exit(bandsaw::bench::run(&a)),
        Some(Command::Openapi) => std::process::exit(cli::openapi()),
        Some(Command::Serve(config)) => serve(config),
        None => serve(args.serve),
    }
}

fn serve(config: Config) {
    bandsaw::telemetry::init_logging(config.log_format);
    let runtime = tokio::runtime::Builder::new_multi_thread()
        .enable_all()
        .build()
        .expect("tokio runtime");
    let result = runtime.block_on(async {
        let app = Application::build(config).await?;
        let addr = app.address();
        println!("bandsaw listening on http://{addr}");
        println!(
            "try: curl -s http://{addr}/v1/interval -H 'Content-Type: application/json' -d '{{\"data\": [12.1, 9.8, 15.3, 11.0, 13.4, 10.2, 14.8, 12.9], \"statistic\": \"mean\", \"seed\": 7}}'"
        );
        app.run_until_stopped().await
    });
    if let Err(e) = result {
        eprintln!("bandsaw: {e}");
        std::process::exit(1);
    }
}
