//! `caldera-app [TABLE|FOLDER|SESSION.ron] [--export-dir DIR]`: the desktop app.

use std::path::PathBuf;

use caldera_app::{AppOptions, CalderaApp};

fn main() -> eframe::Result<()> {
    let mut options = AppOptions::default();
    let mut args = std::env::args().skip(1);
    while let Some(arg) = args.next() {
        match arg.as_str() {
            "--export-dir" => {
                if let Some(dir) = args.next() {
                    options.export_dir = PathBuf::from(dir);
                }
            }
            "--help" | "-h" => {
                println!(
                    "caldera-app [TABLE | FOLDER | SESSION.ron] [--export-dir DIR]\n\nOpens the demo catalogue (demo_galaxies) when no path is given."
                );
                return Ok(());
            }
            path if path.ends_with(".ron") => options.session = Some(PathBuf::from(path)),
            path => options.catalogue = Some(PathBuf::from(path)),
        }
    }
    let native = eframe::NativeOptions {
        renderer: eframe::Renderer::Glow,
        viewport: egui::ViewportBuilder::default()
            .with_title("Caldera")
            .with_inner_size([1400.0, 860.0])
            .with_drag_and_drop(true),
        ..Default::default()
    };
    eframe::run_native(
        "Caldera",
        native,
        Box::new(move |cc| Ok(Box::new(CalderaApp::new(cc, options)))),
    )
}
