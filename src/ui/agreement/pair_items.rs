//! The pair detail's pictures: the candidate item's picture, title and description and,
//! for an anchor context, the anchor item's title and picture, so the lead settles a
//! pair seeing what the reviewers saw.

use std::path::PathBuf;

use super::AgreementModel;
use crate::study::cards::ItemCard;
use crate::ui::image_cache::{self, ImageCache};

const SIDE: u32 = 160;

/// The picture cache of the pair detail, made for the study's catalog folder.
#[derive(Default)]
pub struct PairPictures {
    images: Option<(Option<PathBuf>, ImageCache)>,
}

impl PairPictures {
    fn cache(&mut self, dir: &Option<PathBuf>) -> &mut ImageCache {
        if self.images.as_ref().is_none_or(|(d, _)| d != dir) {
            self.images = Some((dir.clone(), ImageCache::new(dir.clone(), 32)));
        }
        let (_, cache) = self.images.as_mut().expect("just made");
        cache
    }

    /// Draws the anchor item (for an anchor context) beside the candidate item.
    pub fn show(&mut self, ui: &mut egui::Ui, model: &AgreementModel, context: &str, item: &str) {
        let ctx = ui.ctx().clone();
        let images = self.cache(&model.catalog_dir);
        images.collect(&ctx);
        let anchor = model
            .anchors
            .get(context)
            .map(|id| (id, model.items.get(id)));
        ui.horizontal_top(|ui| {
            if let Some((id, card)) = anchor {
                ui.vertical(|ui| {
                    ui.set_max_width(SIDE as f32 + 20.0);
                    ui.weak("Anchor item");
                    match card {
                        Some(card) => one_item(ui, images, &ctx, card, false),
                        None => {
                            ui.label(format!("{id} (not in the catalog)"));
                        }
                    }
                });
                ui.separator();
            }
            ui.vertical(|ui| {
                ui.weak("Candidate item");
                match model.items.get(item) {
                    Some(card) => one_item(ui, images, &ctx, card, true),
                    None => {
                        ui.label(format!("{item} (not in the catalog)"));
                    }
                }
            });
        });
    }
}

fn one_item(
    ui: &mut egui::Ui,
    images: &mut ImageCache,
    ctx: &egui::Context,
    card: &ItemCard,
    with_description: bool,
) {
    let picture = images.request(ctx, &card.image, SIDE);
    image_cache::show(
        ui,
        &picture,
        SIDE as f32,
        &format!("picture of {}", card.title),
    );
    ui.strong(format!("{} ({})", card.title, card.id));
    if !card.category.is_empty() {
        ui.weak(&card.category);
    }
    if with_description && !card.description.is_empty() {
        ui.add(egui::Label::new(&card.description).wrap());
    }
}
