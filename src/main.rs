use clap::Parser;

use bandsaw::cli::{self, Cli, Command};
use bandsaw::server::Application;

fn main() {
    let args = Cli::parse();
    match args.command {
        Some(Command::Interval { input }) => std::process::exit(cli::interval(&args.config, input.as_deref())),
        Some(Command::Openapi) => std::process::exit(cli::openapi()),
        None | Some(Command::Serve) => {
            bandsaw::telemetry::init_logging(&args.config.log_format);
            let runtime = tokio::runtime::Builder::new_multi_thread()
                .enable_all()
                .build()
                .expect("tokio runtime");
            let result = runtime.block_on(async {
                let app = Application::build(args.config.clone()).await?;
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
    }
}
