//! Forms: their fields and the shell-like line editing every text field shares, the keys of
//! an open form and of the file picker that leads into the aliquot's form, and the summaries a
//! destructive or bulk form is confirmed with (from what the app holds, or, for a handover,
//! read by the worker). What a saved form does is in `submit`; when the worker refuses it
//! (a vial with too little left, a lab restored under us), the form comes back here with its
//! text kept and the cursor on the field the answer names.

use super::app::{App, Confirm, Mode, Pending};
use super::keys::{Action, Scope};
use super::picker::Picker;
use super::replies::Then;
use super::submit::{Saved, handover_dir};
use super::units;
use super::worker::{HandoverCounts, Read};
use crate::lab::bench;
use crate::store::model;
use crossterm::event::{KeyCode, KeyEvent};

#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum FormKind {
    NewBatch,
    AddAliquot,
    NewVial,
    Draw,
    Move,
    Dispose,
    ChangeCurve,
    Watch,
    Import,
    VoidAliquot,
    ReinstateAliquot,
    EditAliquot,
    VoidBatch,
    ReinstateBatch,
    GoToBatch,
    ReinstateVial,
    MoveSpectrum,
    Handover,
    /// A new, empty lab: the first person and the first place for vials.
    FirstRun,
}

/// One text field of a form: its label, its text and where the cursor is (a character index).
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Field {
    pub label: String,
    pub text: String,
    pub cursor: usize,
}

#[derive(Debug, Clone)]
pub struct Form {
    pub kind: FormKind,
    pub title: String,
    pub fields: Vec<Field>,
    pub focus: usize,
    /// The aliquot, batch or vial the form acts on, fixed when it opened (named in its title).
    pub target: Option<i64>,
}

impl Form {
    pub(super) fn new(kind: FormKind, title: &str, fields: &[(&str, &str)]) -> Form {
        Form {
            kind,
            title: title.into(),
            fields: fields
                .iter()
                .map(|(a, b)| Field {
                    label: a.to_string(),
                    text: b.to_string(),
                    cursor: b.chars().count(),
                })
                .collect(),
            focus: 0,
            target: None,
        }
    }
    pub(super) fn on(mut self, id: i64) -> Form {
        self.target = Some(id);
        self
    }
    pub(super) fn get(&self, label: &str) -> String {
        self.fields
            .iter()
            .find(|f| f.label == label)
            .map(|f| f.text.trim().to_string())
            .unwrap_or_default()
    }
    fn push(&mut self, label: &str, text: String) {
        let cursor = text.chars().count();
        self.fields.push(Field {
            label: label.into(),
            text,
            cursor,
        });
    }
    /// An error that names a field ("excitation nm: …") takes the cursor there.
    pub(super) fn focus_named(&mut self, error: &str) {
        if let Some(i) = self
            .fields
            .iter()
            .position(|x| error.starts_with(&format!("{}:", x.label)))
        {
            self.focus = i;
        }
    }
}

/// One change to a line of text being edited.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Edit {
    Left,
    Right,
    Start,
    End,
    Back,
    Forward,
    KillToStart,
    WordBack,
    Insert(char),
}

fn byte_at(s: &str, chars: usize) -> usize {
    s.char_indices().nth(chars).map(|(b, _)| b).unwrap_or(s.len())
}

/// Applies an edit to `text` with its cursor (a character index, kept within the text).
/// Returns whether the text changed. A word, for Ctrl-W, ends at whitespace, as in a shell.
pub fn edit_line(text: &mut String, cursor: &mut usize, e: Edit) -> bool {
    let len = text.chars().count();
    *cursor = (*cursor).min(len);
    match e {
        Edit::Left => *cursor = cursor.saturating_sub(1),
        Edit::Right => *cursor = (*cursor + 1).min(len),
        Edit::Start => *cursor = 0,
        Edit::End => *cursor = len,
        Edit::Back if *cursor > 0 => {
            let b = byte_at(text, *cursor - 1);
            text.remove(b);
            *cursor -= 1;
            return true;
        }
        Edit::Forward if *cursor < len => {
            text.remove(byte_at(text, *cursor));
            return true;
        }
        Edit::KillToStart if *cursor > 0 => {
            text.replace_range(..byte_at(text, *cursor), "");
            *cursor = 0;
            return true;
        }
        Edit::WordBack if *cursor > 0 => {
            let before: Vec<char> = text.chars().take(*cursor).collect();
            let mut i = before.len();
            while i > 0 && before[i - 1].is_whitespace() {
                i -= 1;
            }
            while i > 0 && !before[i - 1].is_whitespace() {
                i -= 1;
            }
            let (from, to) = (byte_at(text, i), byte_at(text, *cursor));
            text.replace_range(from..to, "");
            *cursor = i;
            return true;
        }
        Edit::Insert(c) if !c.is_control() => {
            text.insert(byte_at(text, *cursor), c);
            *cursor += 1;
            return true;
        }
        _ => {}
    }
    false
}

/// What a form asks before it is done.
pub(super) enum Asking {
    Nothing,
    Now(Confirm),
    /// The summary needs the lab: the worker reads it and the confirmation opens then.
    Sent,
}

/// The confirmation of a repeat, from the batch as stored.
pub(super) fn repeat_confirm(b: &model::BatchRow) -> Confirm {
    let id = b.id;
    let recipe = match (&b.recipe, b.recipe_version) {
        (Some(r), Some(v)) => format!("recipe {r} v{v}"),
        (Some(r), None) => format!("recipe {r}"),
        _ => "no recipe".into(),
    };
    Confirm::new(
        format!("Repeat batch {id} {}?", b.name),
        vec![
            format!("A new batch \"{} (repeat)\" is logged:", b.name),
            format!("  {}, {recipe}, status planned", b.material),
            format!("  linked to batch {id} as its repeat"),
            format!("Batch {id} itself does not change."),
        ],
        Pending::Repeat(id),
    )
}

/// The confirmation of a handover, from what the worker counted.
pub(super) fn handover_confirm(f: Form, c: &HandoverCounts) -> Confirm {
    let (from, to, dir) = (f.get("from"), f.get("to"), f.get("pack folder"));
    let mut shown = c.vials.iter().take(6).cloned().collect::<Vec<_>>().join(", ");
    if c.vials.len() > 6 {
        shown.push_str(&format!(" and {} more", c.vials.len() - 6));
    }
    Confirm::new(
        format!("Hand over from {from} to {to}?"),
        vec![
            format!(
                "{} vials and {} open batches (planned or growing) go to {to}.",
                c.vials.len(),
                c.open_batches
            ),
            format!("  vials: {}", if shown.is_empty() { "none".into() } else { shown }),
            "Finished batches keep their operator: who ran a synthesis stays a fact.".into(),
            format!(
                "A handover pack is written to {}",
                handover_dir(&dir, &from, &to).display()
            ),
        ],
        Pending::Form(f),
    )
}

impl App {
    pub(super) fn form_key(&mut self, mut f: Form, ev: KeyEvent) {
        let n = f.fields.len().max(1);
        let action = self.keys.action_in(&ev, Scope::Form).or(match ev.code {
            KeyCode::Down => Some(Action::NextField),
            KeyCode::Up => Some(Action::PrevField),
            _ => None,
        });
        match action {
            Some(Action::Cancel) => return,
            Some(Action::NextField) => f.focus = (f.focus + 1) % n,
            Some(Action::PrevField) => f.focus = (f.focus + n - 1) % n,
            Some(Action::Save) => match self.confirmation(&f) {
                Ok(Asking::Now(c)) => {
                    self.mode = Mode::Confirm(Box::new(c));
                    return;
                }
                Ok(Asking::Sent) => return,
                Ok(Asking::Nothing) => match self.submit(&f) {
                    Ok(Saved::Done(msg)) => {
                        self.finished(msg, &f, None);
                        return;
                    }
                    Ok(Saved::Sent) => return,
                    Err(e) => {
                        f.focus_named(&e);
                        self.error(e)
                    }
                },
                Err(e) => self.error(e),
            },
            _ => {
                if let Some(e) = self.field_edit(&ev)
                    && let Some(field) = f.fields.get_mut(f.focus)
                {
                    edit_line(&mut field.text, &mut field.cursor, e);
                }
            }
        }
        self.mode = Mode::Form(f);
    }

    /// The worker refused what a form asked: the form comes back (its text kept, the cursor on
    /// the field the error names) unless the person is in another form by now.
    pub(super) fn form_back(&mut self, mut f: Form, e: String) {
        f.focus_named(&e);
        self.error(e);
        if matches!(self.mode, Mode::Normal | Mode::Help) {
            self.mode = Mode::Form(f);
        }
    }

    pub(super) fn picker_key(&mut self, mut p: Picker, ev: KeyEvent) {
        if p.typing {
            match self.keys.action_in(&ev, Scope::PickerPath) {
                Some(Action::PathStop) => {
                    p.typing = false;
                    p.completions.clear();
                }
                Some(Action::PathComplete) => {
                    p.path_fresh = false;
                    p.complete()
                }
                Some(Action::PathGo) => {
                    p.go_typed();
                }
                _ => {
                    if let Some(e) = self.field_edit(&ev) {
                        if p.path_fresh && matches!(e, Edit::Insert('/' | '~')) {
                            p.path_text.clear();
                            p.path_cursor = 0;
                        }
                        p.path_fresh = false;
                        edit_line(&mut p.path_text, &mut p.path_cursor, e);
                        p.completions.clear();
                    }
                }
            }
            self.mode = Mode::Picker(Box::new(p));
            return;
        }
        let page = self.page_rows() as isize;
        // The table's keys first; then the alternates its help names (j, k and ←), for keys
        // the table leaves free here.
        let action = self.keys.action_in(&ev, Scope::Picker).or(match ev.code {
            KeyCode::Char('j') => Some(Action::Down),
            KeyCode::Char('k') => Some(Action::Up),
            KeyCode::Left => Some(Action::PickParent),
            _ => None,
        });
        match action {
            Some(Action::Down) => p.step(1),
            Some(Action::Up) => p.step(-1),
            Some(Action::PageDown) => p.step(page),
            Some(Action::PageUp) => p.step(-page),
            Some(Action::PickFirst) => p.step(-(p.entries.len() as isize)),
            Some(Action::PickLast) => p.step(p.entries.len() as isize),
            _ => {}
        }
        let said = match action {
            Some(Action::PickCancel) => return,
            Some(Action::PickTake) => match p.selected_entry().cloned() {
                Some(e) if e.is_dir => {
                    p.go_to(&e.path, None);
                    Ok(String::new())
                }
                Some(e) => match p.selected_kind() {
                    Some(k @ ("abs" | "pl")) => p.take(k),
                    _ if matches!(&p.preview, Some((q, Err(_))) if *q == e.path) => p.take("abs"),
                    _ => Err(format!(
                        "cannot tell what kind {} is: a takes it as absorbance, p as PL",
                        e.name
                    )),
                },
                None => Err("nothing here".into()),
            },
            Some(Action::PickAbsorbance) => p.take("abs"),
            Some(Action::PickPl) => p.take("pl"),
            Some(Action::PickParent) => {
                p.up();
                Ok(String::new())
            }
            Some(Action::PickTypePath) => {
                let mut start = p.folder.display().to_string();
                if !start.ends_with('/') {
                    start.push('/');
                }
                p.start_typing(start);
                Ok(String::new())
            }
            Some(Action::PickContinue) => {
                if p.abs.is_none() && p.pl.is_none() {
                    Err("take a file first: Enter takes it as the kind it looks like".into())
                } else {
                    self.aliquot_form_from(&p);
                    return;
                }
            }
            _ => Ok(String::new()),
        };
        match said {
            Ok(s) if !s.is_empty() => self.info(s),
            Ok(_) => {}
            Err(e) => self.error(e),
        }
        self.mode = Mode::Picker(Box::new(p));
    }

    /// The aliquot's form after the picker: the files taken, minutes from the absorbance
    /// file's name where it states them, the rest as the batch's last aliquot was measured.
    fn aliquot_form_from(&mut self, p: &Picker) {
        let Some(batch) = p.batch else {
            self.error("no batch open");
            return;
        };
        self.remember_folder(batch, &p.folder);
        let d = self.bench_for(batch);
        let minutes = p
            .abs
            .iter()
            .chain(p.pl.iter())
            .find_map(|f| bench::minutes_in_name(f))
            .map(units::minutes)
            .unwrap_or_default();
        let words = self.batch_words(batch);
        let mut f = Form::new(
            FormKind::AddAliquot,
            &format!("Add an aliquot to {words}"),
            &[
                ("minutes", &minutes),
                ("stage", ""),
                ("dilution", &units::plain(d.dilution)),
                ("path cm", &units::plain(d.path_cm)),
                ("solvent", &d.solvent),
                ("excitation nm", &d.excitation_nm.map(units::plain).unwrap_or_default()),
            ],
        );
        f.push(
            "abs file",
            p.abs.as_ref().map(|x| x.display().to_string()).unwrap_or_default(),
        );
        f.push(
            "pl file",
            p.pl.as_ref().map(|x| x.display().to_string()).unwrap_or_default(),
        );
        f.target = Some(batch);
        self.mode = Mode::Form(f);
    }

    /// The summary a destructive or bulk form's action is confirmed with, or none when the
    /// form needs no confirmation. A missing reason is refused here, before anything is asked.
    fn confirmation(&mut self, f: &Form) -> Result<Asking, String> {
        let needs_why = matches!(f.kind, FormKind::Dispose | FormKind::VoidAliquot | FormKind::VoidBatch);
        if !needs_why && f.kind != FormKind::Handover {
            return Ok(Asking::Nothing);
        }
        let why = f.get("why");
        if needs_why && why.is_empty() {
            return Err("why: give a reason (the record keeps it beside the change)".into());
        }
        let id = f.target.unwrap_or(0);
        let (title, mut lines) = match f.kind {
            FormKind::Dispose => {
                let v = self
                    .vials
                    .iter()
                    .find(|v| v.id == id)
                    .ok_or("that vial is no longer on the shelf")?;
                let conc = v
                    .concentration_molar
                    .map(|c| format!(", {} µM", units::micromolar(c)))
                    .unwrap_or_default();
                (
                    format!("Dispose of vial {}?", v.label),
                    vec![
                        format!(
                            "vial {} of batch {} {} ({})",
                            v.label, v.batch_id, v.batch_name, v.material
                        ),
                        format!(
                            "  at {}{}: {} mL left{conc}, owner {}",
                            v.location,
                            v.position.as_ref().map(|p| format!(" {p}")).unwrap_or_default(),
                            units::ml(v.volume_ml),
                            v.owner.as_deref().unwrap_or("none")
                        ),
                        "It leaves the shelf and the stock counts; t still lists it, u puts it back.".into(),
                    ],
                )
            }
            FormKind::VoidAliquot => {
                let s = self.sheet.as_ref().ok_or("that aliquot is not in the open batch")?;
                let a = s
                    .aliquots
                    .iter()
                    .find(|a| a.id == id)
                    .ok_or("that aliquot is not in the open batch")?;
                let product = s.product.as_ref().map(|p| p.id) == Some(id);
                let mut l = vec![
                    format!(
                        "aliquot {id} ({}) of {}: peak {} nm, D {} nm",
                        super::app::aliquot_label(a),
                        self.batch_words(s.batch.id),
                        super::app::num(a.first_exciton_nm, 1),
                        super::app::num(a.diameter_nm, 2)
                    ),
                    "It is left out of the growth series, product, search, plots and pack;".into(),
                    "  its spectra and values stay in the record, and x reinstates it.".into(),
                ];
                if product {
                    l.push("It is the batch's product aliquot: the product moves to the one before.".into());
                }
                (format!("Void aliquot {id}?"), l)
            }
            FormKind::VoidBatch => {
                let s = self.sheet.as_ref().ok_or("no batch open")?;
                (
                    format!("Void {}?", self.batch_words(id)),
                    vec![
                        format!(
                            "{} ({}, {}): {} aliquots, {} vials",
                            self.batch_words(id),
                            s.batch.material,
                            units::words(s.batch.status.as_str()),
                            s.aliquots.len(),
                            s.vials.len()
                        ),
                        "It is left out of the batch list, search and the pack;".into(),
                        "  nothing is deleted: g opens it by id, and X there reinstates it.".into(),
                    ],
                )
            }
            _ => {
                let (from, to) = (f.get("from"), f.get("to"));
                if from.is_empty() || to.is_empty() {
                    return Err("from and to: name both people".into());
                }
                let label = format!("reading what {from}'s handover moves");
                self.ask(Read::Handover { from, to }, Then::Handover(f.clone()), Some(label));
                return Ok(Asking::Sent);
            }
        };
        if needs_why {
            lines.push(format!("why: {why}"));
        }
        Ok(Asking::Now(Confirm::new(title, lines, Pending::Form(f.clone()))))
    }
}
