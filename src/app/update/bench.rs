//! The bench calculator over an incident: opening it and saving its result.

use crate::app::bench::{BenchState, Outcome};
use crate::app::{Action, App, BenchTarget, Screen};
use crate::store::bench_record::{
    bench_examination, BenchRecord, BoundaryLines, LoadHypothesis, ThermalHypothesis,
};
use crate::store::model::Incident;

impl App {
    pub(super) fn open_bench_for(&mut self, inc: &Incident) {
        let mut bench = BenchState::with_materials(self.bench.materials.clone());
        bench.set_viewing_modes(&self.lists);
        bench.prefill(inc);
        bench.form.mark_clean();
        self.bench = bench;
        self.bench_target = Some(BenchTarget {
            id: inc.id.clone(),
            reference: inc.reference.clone(),
            revision: inc.revision,
        });
        self.stack.push(Screen::Bench);
    }

    pub(super) fn update_bench(&mut self, action: Action) {
        // a bench opened from the log (or made afresh) learns the database's viewing modes
        self.bench.set_viewing_modes(&self.lists);
        if action == Action::Save {
            self.save_bench();
            return;
        }
        self.bench.update(action);
    }

    pub(super) fn save_bench(&mut self) {
        let Some(target) = self.bench_target.clone() else {
            self.error("no incident open: open one from the log and press b to save into it");
            return;
        };
        let Outcome::Done {
            input, analysis, ..
        } = &self.bench.outcome
        else {
            let why = match &self.bench.outcome {
                Outcome::Incomplete(e) | Outcome::Refused(e) => e.clone(),
                _ => "no readings yet".to_string(),
            };
            self.error(format!("not saved: {why}"));
            return;
        };
        let stamp = self.stamp();
        let Some(store) = self.store.as_mut() else {
            return;
        };
        let current = match store.get(&target.id) {
            Ok(c) => c,
            Err(e) => {
                self.error(e.to_string());
                return;
            }
        };
        if current.revision != target.revision {
            self.error(format!(
                "{} was changed meanwhile (revision {} now, {} when the bench opened); nothing \
                 was saved and your readings are kept. Esc, reopen and press b again.",
                target.reference, current.revision, target.revision
            ));
            return;
        }
        let readings: Vec<BoundaryLines> = [
            ("r_mist", "mirror_mist"),
            ("r_hackle", "mist_hackle"),
            ("r_branch", "branching"),
        ]
        .into_iter()
        .filter_map(|(key, boundary)| {
            self.bench.form.field(key).map(|f| BoundaryLines {
                boundary,
                label: f.label,
                lines: f.lines(),
            })
        })
        .collect();
        let viewing = self
            .bench
            .form
            .pick("viewing")
            .and_then(|p| p.chosen_item())
            .map(|i| i.code.clone())
            .filter(|c| !c.is_empty());
        let record = BenchRecord {
            analyst: &self.actor,
            at: stamp.at,
            readings,
            viewing: viewing.as_deref(),
            input,
            analysis,
            thermal: match &self.bench.thermal {
                Some(Ok(t)) => Some(ThermalHypothesis {
                    delta_t_k: t.delta_t_k,
                    restraint: t.restraint,
                    stress_pa: t.stress_pa,
                    verdict: t.verdict.as_ref().map(|v| v.explanation.clone()).ok(),
                }),
                _ => None,
            },
            load: match &self.bench.hypothesis {
                Some(Ok(c)) => Some(LoadHypothesis {
                    kind: c.kind,
                    inputs: &c.summary,
                    outcome: &c.outcome,
                    verdict: c
                        .verdict
                        .as_ref()
                        .and_then(|v| v.as_ref().ok())
                        .map(|v| v.explanation.clone()),
                    fields: self.bench.hypothesis_fields(),
                }),
                _ => None,
            },
        };
        let exam = match bench_examination(current.examinations.last(), &record) {
            Ok(e) => e,
            Err(e) => {
                self.error(format!("not saved: {e}"));
                return;
            }
        };
        match store.put_examination(&target.id, target.revision, &exam, &stamp) {
            Ok(saved) => {
                self.bench_target = Some(BenchTarget {
                    id: saved.id.clone(),
                    reference: saved.reference.clone(),
                    revision: saved.revision,
                });
                self.bench.form.mark_clean();
                let msg = format!(
                    "saved readings and result into {} (revision {})",
                    saved.reference, saved.revision
                );
                self.reopen_incident();
                self.info(msg);
            }
            Err(e) => self.error(format!("not saved: {e}; your readings are kept")),
        }
    }
}
