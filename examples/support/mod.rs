//! What the examples share: command-line options, the output folder, the font, and the
//! pictures (field maps with isolines and a colour scale, line charts).
//!
//! Each example uses only part of this module, so unused items are allowed here.
#![allow(dead_code)]

pub mod chart;
pub mod contour;
pub mod font;
pub mod picture;
pub mod ramp;

use std::fmt::Display;
use std::path::{Path, PathBuf};

/// Any error an example can end with: a quintet error, an I/O error, a drawing error, a bad
/// option. `main` prints it and exits with status 1.
pub type Failure = Box<dyn std::error::Error>;

/// An error from a message.
pub fn failure(message: impl Display) -> Failure {
    message.to_string().into()
}

/// Run `body` and turn an error into a message on stderr and exit status 1 (instead of the
/// `Debug` dump that returning an error from `main` prints).
pub fn run(body: impl FnOnce() -> Result<(), Failure>) {
    if let Err(e) = body() {
        eprintln!("error: {e}");
        std::process::exit(1);
    }
}

/// The options every example takes.
pub struct Options {
    /// Folder the pictures go to (created if missing).
    pub out: PathBuf,
    /// A TrueType font chosen on the command line, if any.
    pub font: Option<PathBuf>,
    /// The remaining arguments, for options of the example's own.
    pub rest: pico_args::Arguments,
}

/// The help text of the options every example takes.
pub const COMMON_HELP: &str = concat!(
    "    --out DIR     folder for the pictures (default: out/NAME)\n",
    "    --font FILE   TrueType font for the text in the pictures (default: DejaVu Sans,\n",
    "                  found through fontconfig or in the usual folders)\n",
    "    -h, --help    this text",
);

impl Options {
    /// Parse the common options of example `name`; on `--help`, print `help` (which ends
    /// with the example's own option lines under `Options:`) and the common options, and exit.
    ///
    /// # Errors
    ///
    /// A value that cannot be read.
    pub fn parse(name: &str, help: &str) -> Result<Options, Failure> {
        let mut args = pico_args::Arguments::from_env();
        if args.contains(["-h", "--help"]) {
            println!("{help}\n{}", COMMON_HELP.replace("NAME", name));
            std::process::exit(0);
        }
        let out = args
            .opt_value_from_os_str("--out", |s| Ok::<_, String>(PathBuf::from(s)))
            .map_err(|e| failure(format!("--out: {e}")))?
            .unwrap_or_else(|| Path::new("out").join(name));
        let font = args
            .opt_value_from_os_str("--font", |s| Ok::<_, String>(PathBuf::from(s)))
            .map_err(|e| failure(format!("--font: {e}")))?;
        Ok(Options {
            out,
            font,
            rest: args,
        })
    }

    /// Refuse arguments nobody asked for, create the output folder and load the font. Call
    /// after the example has taken its own options from [`Options::rest`].
    ///
    /// # Errors
    ///
    /// An unknown argument, a folder that cannot be created, no usable font.
    pub fn finish(self) -> Result<PathBuf, Failure> {
        let left = self.rest.finish();
        if !left.is_empty() {
            let left: Vec<String> = left
                .iter()
                .map(|a| a.to_string_lossy().into_owned())
                .collect();
            return Err(failure(format!(
                "unknown argument(s): {} (try --help)",
                left.join(" ")
            )));
        }
        std::fs::create_dir_all(&self.out).map_err(|e| {
            failure(format!(
                "cannot create the output folder {}: {e}",
                self.out.display()
            ))
        })?;
        font::load(self.font.as_deref())?;
        Ok(self.out)
    }
}

/// Read an option's value of type `T`, or `default`.
///
/// # Errors
///
/// A value that does not parse.
pub fn option<T>(
    args: &mut pico_args::Arguments,
    key: &'static str,
    default: T,
) -> Result<T, Failure>
where
    T: std::str::FromStr,
    T::Err: Display,
{
    Ok(args
        .opt_value_from_str(key)
        .map_err(|e| failure(format!("{key}: {e}")))?
        .unwrap_or(default))
}

/// The face positions of an axis (`n + 1` of them), times `scale` (1000 for mm).
pub fn faces(axis: &quintet::model::Axis, scale: f64) -> Vec<f64> {
    let n = axis.len();
    let mut faces: Vec<f64> = (0..n)
        .map(|i| scale * (axis.position(i) - axis.to_low_face(i)))
        .collect();
    faces.push(scale * (axis.position(n - 1) + axis.to_high_face(n - 1)));
    faces
}

/// The node positions of an axis, times `scale`.
pub fn nodes(axis: &quintet::model::Axis, scale: f64) -> Vec<f64> {
    axis.positions().iter().map(|p| scale * p).collect()
}
