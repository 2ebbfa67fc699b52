//! The export window: where, which figures (format, theme, size in pixels or millimetres or
//! inches at a resolution, colour range, framing), plots, data files, and an animation (GIF,
//! APNG or numbered PNG frames) with progress and cancel. The work runs in
//! [`crate::export_job`].

use std::path::PathBuf;

use egui::{Context, RichText};
use spinfall_render::{FigureSize, PhysicalUnit, ThemeKind};

use crate::app::SpinfallApp;
use crate::command::{
    AnimationRequest, AnimationTarget, Command, ExportRequest, FigureChoice, ImageFormat,
};
use crate::menu::AMBER;
use crate::number_field::NumberField;
use crate::state::PersistedState;

/// Units of the figure size.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum SizeUnit {
    /// Pixels.
    Px,
    /// Millimetres at a resolution.
    Mm,
    /// Inches at a resolution.
    In,
}

/// The export form's fields.
#[derive(Debug, Clone)]
pub struct ExportForm {
    /// Target folder, typed or chosen.
    pub folder: String,
    /// File name stem.
    pub stem: String,
    /// What to write (the figure look comes from the fields below).
    pub request: ExportRequest,
    /// Theme of figures and animations.
    pub theme: ThemeKind,
    /// Unit of `width` and `height`.
    pub size_unit: SizeUnit,
    /// Width in `size_unit`.
    pub width: f64,
    /// Height in `size_unit`.
    pub height: f64,
    /// Resolution of a printed size, dots per inch.
    pub dpi: f64,
    /// Fix the colour range of the surface map.
    pub fixed_range: bool,
    /// The fixed range, in the map field's unit.
    pub range: [f64; 2],
    /// Re-aim the views at the body.
    pub fit_body: bool,
    /// Animation format.
    pub animation: AnimationTarget,
    /// Animation frames.
    pub frames: u32,
    /// Animation frame rate.
    pub fps: f64,
    /// Animation start, s.
    pub from_s: f64,
    /// Animation end, s (`None`: the end of the flights).
    pub to_s: Option<f64>,
}

impl ExportForm {
    pub(crate) fn from_state(state: &PersistedState) -> Self {
        Self {
            folder: state.export_folder.clone(),
            stem: "spinfall".into(),
            request: ExportRequest {
                composite: true,
                results: true,
                trajectories: true,
                surface_map: true,
                scenario: true,
                ..ExportRequest::default()
            },
            theme: ThemeKind::Dark,
            size_unit: SizeUnit::Px,
            width: state.export_size_px[0] as f64,
            height: state.export_size_px[1] as f64,
            dpi: 300.0,
            fixed_range: false,
            range: [0.0, 1.0],
            fit_body: false,
            animation: AnimationTarget::Gif,
            frames: 60,
            fps: 15.0,
            from_s: 0.0,
            to_s: None,
        }
    }

    /// The figure settings of the form.
    pub fn figure(&self) -> FigureChoice {
        let size = match self.size_unit {
            SizeUnit::Px => FigureSize::Pixels {
                width_px: self.width.round() as u32,
                height_px: self.height.round() as u32,
            },
            SizeUnit::Mm | SizeUnit::In => FigureSize::Physical {
                width: self.width,
                height: self.height,
                unit: if self.size_unit == SizeUnit::Mm {
                    PhysicalUnit::Mm
                } else {
                    PhysicalUnit::In
                },
                dpi: self.dpi,
            },
        };
        FigureChoice {
            theme: self.theme,
            size,
            color_range: self.fixed_range.then_some(self.range),
            fit_body: self.fit_body,
        }
    }

    /// The request with the typed folder, stem and figure settings.
    pub fn to_request(&self) -> ExportRequest {
        ExportRequest {
            folder: PathBuf::from(self.folder.trim()),
            stem: self.stem.trim().to_string(),
            figure: self.figure(),
            ..self.request.clone()
        }
    }

    /// The animation request of the form, ending at `end_s` unless an end was typed.
    pub fn to_animation(&self, end_s: f64) -> AnimationRequest {
        AnimationRequest {
            folder: PathBuf::from(self.folder.trim()),
            stem: self.stem.trim().to_string(),
            target: self.animation,
            frames: self.frames,
            fps: self.fps,
            from_s: self.from_s,
            to_s: self.to_s.unwrap_or(end_s),
            figure: self.figure(),
        }
    }
}

impl SpinfallApp {
    pub(crate) fn export_window(&mut self, ctx: &Context) {
        if !self.show_export {
            return;
        }
        let mut open = true;
        let end_s = self.end_time_s();
        let units = self.state.view.units;
        let map_unit = self
            .state
            .view
            .map
            .map(|f| crate::units::pretty_unit(f.unit()));
        egui::Window::new("Export")
            .open(&mut open)
            .resizable(false)
            .default_pos([420.0, 120.0])
            .show(ctx, |ui| {
                egui::ScrollArea::vertical()
                    .max_height(ctx.content_rect().height() - 140.0)
                    .min_scrolled_height((ctx.content_rect().height() - 200.0).clamp(200.0, 720.0))
                    .show(ui, |ui| {
                    let form = &mut self.export_form;
                    egui::Grid::new("export_where").num_columns(2).show(ui, |ui| {
                        let l = ui.label("Folder:");
                        ui.horizontal(|ui| {
                            ui.add(
                                egui::TextEdit::singleline(&mut form.folder)
                                    .desired_width(260.0)
                                    .hint_text("/path/to/folder (created if missing)"),
                            )
                            .labelled_by(l.id);
                            if ui.button("Browse…").clicked() {
                                self.commands.push(Command::BrowseExportFolder);
                            }
                        });
                        ui.end_row();
                        let l = ui.label("File name prefix:");
                        ui.text_edit_singleline(&mut form.stem).labelled_by(l.id);
                        ui.end_row();
                    });
                    ui.separator();
                    ui.label(RichText::new("Figures").strong());
                    egui::Grid::new("export_figures").num_columns(2).show(ui, |ui| {
                        let r = &mut form.request;
                        ui.label("Views:");
                        ui.vertical(|ui| {
                            ui.checkbox(&mut r.composite, "both views side by side");
                            ui.checkbox(&mut r.body_view, "body-fixed view");
                            ui.checkbox(&mut r.inertial_view, "inertial view");
                            ui.checkbox(&mut r.plots, "plots of the selected launch (altitude, speed, Jacobi drift)");
                        });
                        ui.end_row();
                        ui.label("Format:");
                        ui.horizontal(|ui| {
                            ui.radio_value(&mut r.format, ImageFormat::Png, "PNG");
                            ui.radio_value(&mut r.format, ImageFormat::Svg, "SVG (vector lines and text)");
                        });
                        ui.end_row();
                        ui.label("Theme:");
                        ui.horizontal(|ui| {
                            ui.radio_value(&mut form.theme, ThemeKind::Dark, "dark (screen)");
                            ui.radio_value(&mut form.theme, ThemeKind::Light, "light (print)");
                        });
                        ui.end_row();
                        ui.label("Size unit:");
                        ui.horizontal(|ui| {
                            let before = form.size_unit;
                            ui.radio_value(&mut form.size_unit, SizeUnit::Px, "px");
                            ui.radio_value(&mut form.size_unit, SizeUnit::Mm, "mm");
                            ui.radio_value(&mut form.size_unit, SizeUnit::In, "in");
                            if form.size_unit != before {
                                // Sensible starting sizes in the new unit.
                                let (w, h) = match form.size_unit {
                                    SizeUnit::Px => (1920.0, 1080.0),
                                    SizeUnit::Mm => (180.0, 100.0),
                                    SizeUnit::In => (7.0, 4.0),
                                };
                                form.width = w;
                                form.height = h;
                            }
                        });
                        ui.end_row();
                        let unit = match form.size_unit {
                            SizeUnit::Px => "px",
                            SizeUnit::Mm => "mm",
                            SizeUnit::In => "in",
                        };
                        let l = ui.label("Width:");
                        NumberField::new(&mut form.width, ("export_w", unit))
                            .range(1.0, 100_000.0)
                            .unit(unit, 1.0)
                            .show(ui)
                            .labelled_by(l.id);
                        ui.end_row();
                        let l = ui.label("Height:");
                        NumberField::new(&mut form.height, ("export_h", unit))
                            .range(1.0, 100_000.0)
                            .unit(unit, 1.0)
                            .show(ui)
                            .labelled_by(l.id);
                        ui.end_row();
                        if form.size_unit != SizeUnit::Px {
                            let l = ui.label("Resolution:");
                            NumberField::new(&mut form.dpi, "export_dpi")
                                .range(30.0, 2400.0)
                                .unit("dpi", 1.0)
                                .show(ui)
                                .labelled_by(l.id);
                            ui.end_row();
                        }
                        match form.figure().size.resolve() {
                            Ok((w, h, _)) => {
                                ui.label("");
                                ui.weak(format!("{w} x {h} px; text and lines scale with the size"));
                            }
                            Err(e) => {
                                ui.label("");
                                ui.colored_label(crate::number_field::ERROR_RED, e.to_string());
                            }
                        }
                        ui.end_row();
                        ui.label("Colour range:");
                        ui.vertical(|ui| match &map_unit {
                            Some(unit) => {
                                ui.checkbox(&mut form.fixed_range, "fixed (otherwise the data's range)");
                                if form.fixed_range {
                                    ui.horizontal(|ui| {
                                        let l = ui.label("from");
                                        NumberField::new(&mut form.range[0], "range_min")
                                            .width(70.0)
                                            .show(ui)
                                            .labelled_by(l.id);
                                        let l = ui.label("to");
                                        NumberField::new(&mut form.range[1], "range_max")
                                            .width(70.0)
                                            .unit(unit.clone(), 1.0)
                                            .show(ui)
                                            .labelled_by(l.id);
                                    });
                                    if form.range[1] <= form.range[0] {
                                        ui.colored_label(
                                            crate::number_field::ERROR_RED,
                                            "the upper end must be above the lower",
                                        );
                                    }
                                }
                            }
                            None => {
                                ui.weak("the data's (colour the body by a surface map to fix it)");
                            }
                        });
                        ui.end_row();
                        ui.label("Framing:");
                        ui.checkbox(&mut form.fit_body, "fit the body (otherwise as the views show it)");
                        ui.end_row();
                    });
                    ui.separator();
                    ui.label(RichText::new("Data (SI units, named in the columns)").strong());
                    let r = &mut form.request;
                    ui.horizontal_wrapped(|ui| {
                        ui.checkbox(&mut r.results, "results (JSON and CSV)");
                        ui.checkbox(&mut r.trajectories, "trajectories (CSV)");
                        ui.checkbox(&mut r.surface_map, "surface map per face (CSV)");
                        ui.checkbox(&mut r.scenario, "scenario (JSON)");
                    });
                    ui.horizontal(|ui| {
                        let busy = self.export_job.is_some();
                        if ui
                            .add_enabled(!busy, egui::Button::new(RichText::new("Export files").strong()))
                            .clicked()
                        {
                            let req = self.export_form.to_request();
                            if let FigureSize::Pixels { width_px, height_px } = req.figure.size {
                                self.state.export_size_px = [width_px, height_px];
                            }
                            self.state.export_folder = self.export_form.folder.clone();
                            self.commands.push(Command::Export(req));
                        }
                        if let Some(job) = &self.export_job {
                            ui.spinner();
                            ui.label(job.progress.stage());
                            if ui.button("Cancel").clicked() {
                                job.cancel();
                            }
                        }
                    });
                    ui.separator();
                    ui.label(RichText::new("Animation of both views").strong());
                    let form = &mut self.export_form;
                    egui::Grid::new("export_animation").num_columns(2).show(ui, |ui| {
                        ui.label("Format:");
                        ui.horizontal(|ui| {
                            ui.radio_value(&mut form.animation, AnimationTarget::Gif, "GIF");
                            ui.radio_value(&mut form.animation, AnimationTarget::Apng, "APNG");
                            ui.radio_value(&mut form.animation, AnimationTarget::Frames, "PNG frames (folder)");
                        });
                        ui.end_row();
                        let l = ui.label("Frames:");
                        NumberField::new(&mut form.frames, "anim_frames")
                            .range(1.0, spinfall_render::MAX_ANIMATION_FRAMES as f64)
                            .show(ui)
                            .labelled_by(l.id);
                        ui.end_row();
                        let l = ui.label("Frame rate:");
                        NumberField::new(&mut form.fps, "anim_fps")
                            .range(0.1, 60.0)
                            .unit("frames/s", 1.0)
                            .show(ui)
                            .labelled_by(l.id);
                        ui.end_row();
                        let per = units.seconds_per_time_unit();
                        let l = ui.label("From:");
                        NumberField::new(&mut form.from_s, "anim_from")
                            .range(0.0, 1.0e9)
                            .unit(units.time_symbol(), per)
                            .show(ui)
                            .labelled_by(l.id);
                        ui.end_row();
                        let l = ui.label("To:");
                        ui.horizontal(|ui| {
                            let mut to = form.to_s.unwrap_or(end_s);
                            if NumberField::new(&mut to, "anim_to")
                                .range(0.0, 1.0e9)
                                .unit(units.time_symbol(), per)
                                .show(ui)
                                .labelled_by(l.id)
                                .changed()
                            {
                                form.to_s = Some(to);
                            }
                            if form.to_s.is_some() && ui.small_button("end of flights").clicked() {
                                form.to_s = None;
                            }
                        });
                        ui.end_row();
                    });
                    ui.horizontal(|ui| {
                        let busy = self.animation_job.is_some();
                        if ui
                            .add_enabled(!busy, egui::Button::new(RichText::new("Export animation").strong()))
                            .clicked()
                        {
                            self.state.export_folder = self.export_form.folder.clone();
                            self.commands
                                .push(Command::ExportAnimation(self.export_form.to_animation(end_s)));
                        }
                        if let Some(job) = &self.animation_job {
                            let (done, total) = job.progress.counts();
                            ui.add(
                                egui::ProgressBar::new(job.progress.fraction().unwrap_or(0.0))
                                    .desired_width(200.0)
                                    .text(format!("{done} / {total} frames")),
                            );
                            if ui.button("Cancel").clicked() {
                                job.cancel();
                            }
                        }
                    });
                    if let Some((kind, text)) = &self.export_status {
                        let color = match kind {
                            crate::notify::NoticeKind::Error => crate::number_field::ERROR_RED,
                            crate::notify::NoticeKind::Info => egui::Color32::from_rgb(150, 200, 255),
                        };
                        ui.add(egui::Label::new(RichText::new(format!("Last: {text}")).color(color)).wrap());
                    }
                    ui.weak("Files are written under a temporary name and renamed when complete; a folder that does not exist is created.");
                    if self.reports.is_empty() {
                        ui.colored_label(AMBER, "No results yet: figures show the body and the planned sites.");
                    }
                });
            });
        if !open {
            self.show_export = false;
        }
    }
}
