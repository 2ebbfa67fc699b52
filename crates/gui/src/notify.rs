//! Notifications where the user is looking: toasts in the bottom-right corner of the window,
//! above every panel and window (the export window included). Errors stay until dismissed;
//! other notices fade after [`INFO_SECONDS`]. A notice can carry an action (Undo after a
//! removal).

use egui::{Align2, Color32, Context, Order, RichText};

use crate::app::SpinfallApp;
use crate::command::Command;
use crate::number_field::ERROR_RED;

/// How long a notice that is not an error stays, seconds.
pub const INFO_SECONDS: f64 = 10.0;

/// Most toasts shown at once (the newest).
const MAX_SHOWN: usize = 5;

/// Severity of a notice.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum NoticeKind {
    /// Something went wrong: stays until dismissed.
    Error,
    /// Worth knowing (validation warnings, finished exports): fades after a while.
    Info,
}

/// What a notice's button does.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum NoticeAction {
    /// Undo the last edit.
    Undo,
}

/// A message shown as a toast.
#[derive(Debug, Clone, PartialEq)]
pub struct Notice {
    /// Severity.
    pub kind: NoticeKind,
    /// Text.
    pub text: String,
    /// A button beside the text.
    pub action: Option<NoticeAction>,
    /// When it was first shown (egui time, s).
    pub(crate) shown_at_s: Option<f64>,
}

impl Notice {
    /// A notice of `kind`.
    pub fn new(kind: NoticeKind, text: impl Into<String>) -> Self {
        Self {
            kind,
            text: text.into(),
            action: None,
            shown_at_s: None,
        }
    }
}

impl SpinfallApp {
    pub(crate) fn notify(&mut self, notice: Notice) {
        // The same text twice in a row is shown once (a repeated click, say).
        self.notices
            .retain(|n| !(n.text == notice.text && n.kind == notice.kind));
        self.notices.push(notice);
    }

    pub(crate) fn error(&mut self, text: impl Into<String>) {
        self.notify(Notice::new(NoticeKind::Error, text));
    }

    pub(crate) fn info(&mut self, text: impl Into<String>) {
        self.notify(Notice::new(NoticeKind::Info, text));
    }

    /// The toasts (drawn last, above everything).
    pub(crate) fn notices_ui(&mut self, ctx: &Context) {
        let now = ctx.input(|i| i.time);
        for n in &mut self.notices {
            n.shown_at_s.get_or_insert(now);
        }
        self.notices.retain(|n| {
            n.kind == NoticeKind::Error || n.shown_at_s.is_none_or(|t| now - t < INFO_SECONDS)
        });
        if self.notices.is_empty() {
            return;
        }
        if self.notices.iter().any(|n| n.kind == NoticeKind::Info) {
            ctx.request_repaint_after(std::time::Duration::from_millis(500));
        }
        let mut dismiss = None;
        let mut dismiss_all = false;
        let hidden = self.notices.len().saturating_sub(MAX_SHOWN);
        egui::Area::new(egui::Id::unique("spinfall notices"))
            .order(Order::Foreground)
            .anchor(Align2::RIGHT_BOTTOM, [-12.0, -34.0])
            .interactable(true)
            .show(ctx, |ui| {
                ui.set_max_width(460.0);
                if hidden > 0 || self.notices.len() > 1 {
                    ui.horizontal(|ui| {
                        if hidden > 0 {
                            ui.weak(format!("{hidden} older notice(s) not shown"));
                        }
                        if ui.small_button("Dismiss all").clicked() {
                            dismiss_all = true;
                        }
                    });
                }
                for (i, n) in self.notices.iter().enumerate().skip(hidden) {
                    let (color, fill) = match n.kind {
                        NoticeKind::Error => (ERROR_RED, Color32::from_rgb(60, 24, 24)),
                        NoticeKind::Info => (
                            Color32::from_rgb(150, 200, 255),
                            Color32::from_rgb(22, 34, 52),
                        ),
                    };
                    egui::Frame::popup(ui.style())
                        .fill(fill)
                        .stroke(egui::Stroke::new(1.0, color))
                        .show(ui, |ui| {
                            ui.horizontal(|ui| {
                                if ui.small_button("x").on_hover_text("Dismiss").clicked() {
                                    dismiss = Some(i);
                                }
                                if let Some(NoticeAction::Undo) = n.action
                                    && ui.button("Undo").on_hover_text("Ctrl+Z").clicked()
                                {
                                    self.commands.push(Command::Undo);
                                    dismiss = Some(i);
                                }
                                let prefix = match n.kind {
                                    NoticeKind::Error => "Error: ",
                                    NoticeKind::Info => "",
                                };
                                ui.add(
                                    egui::Label::new(
                                        RichText::new(format!("{prefix}{}", n.text)).color(color),
                                    )
                                    .wrap(),
                                );
                            });
                        });
                }
            });
        if dismiss_all {
            self.notices.clear();
        } else if let Some(i) = dismiss {
            self.notices.remove(i);
        }
    }
}
