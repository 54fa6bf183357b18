//! `[[materials]]`: the site's own materials, added to (or replacing) the library's.

use std::collections::BTreeSet;

use super::{table_points, V};
use crate::diag::unknown_name_hint;
use crate::material::{Material, MaterialClass, MaterialLibrary, MaterialModel};
use crate::raw::*;

/// The library with the site's materials added, each checked.
pub(super) fn site_materials(
    v: &mut V<'_>,
    raw: &RawProject,
    library: &MaterialLibrary,
) -> MaterialLibrary {
    let mut lib = library.clone();
    let mut seen = BTreeSet::new();
    for rm in &raw.materials {
        if let Some(m) = site_material(v, rm, &lib, &mut seen) {
            lib.materials.insert(m.id.clone(), m);
        }
    }
    lib
}

/// One `[[materials]]` entry, or None when it has an error (reported).
fn site_material(
    v: &mut V<'_>,
    rm: &toml::Spanned<RawMaterial>,
    lib: &MaterialLibrary,
    seen: &mut BTreeSet<String>,
) -> Option<Material> {
    let span = rm.span();
    let r = rm.get_ref();
    let Some(idv) = &r.id else {
        v.error(
            span,
            "`[[materials]]` entry is missing `id`",
            Some("add `id = \"my-material\"`".into()),
        );
        return None;
    };
    v.unique(seen, idv, "material");
    let id = idv.get_ref().clone();
    let class = match &r.class {
        Some(c) => match MaterialClass::from_id(c.get_ref()) {
            Some(k) => k,
            None => {
                v.error(
                    c.span(),
                    format!("unknown material class `{}`", c.get_ref()),
                    Some(format!("one of: {}", MaterialClass::IDS.join(", "))),
                );
                MaterialClass::Other
            }
        },
        None => lib
            .get(&id)
            .map(|m| m.class)
            .unwrap_or(MaterialClass::Other),
    };
    let kinds = [
        r.loss_db.is_some(),
        r.permittivity.is_some(),
        r.itu.is_some(),
        r.layers.is_some(),
    ];
    if kinds.iter().filter(|k| **k).count() != 1 {
        v.error(
            idv.span(),
            format!(
                "material `{id}` needs exactly one of `loss_db`, `permittivity`, `itu` or `layers`"
            ),
            Some("`loss_db = [[900, 4.0], [2400, 5.0]]` gives measured dB at MHz points".into()),
        );
        return None;
    }
    let model = material_model(v, r, lib)?;
    let name = r
        .name
        .as_ref()
        .map(|n| n.get_ref().clone())
        .unwrap_or_else(|| id.clone());
    let source = r
        .source
        .as_ref()
        .map(|n| n.get_ref().clone())
        .unwrap_or_else(|| "site definition".into());
    Some(Material {
        id,
        name,
        class,
        source,
        confidence: "site".into(),
        model,
        origin: "site".into(),
        reference: None,
    })
}

/// The entry's loss model: exactly one of `loss_db`, `permittivity`, `itu` or `layers`.
fn material_model(v: &mut V<'_>, r: &RawMaterial, lib: &MaterialLibrary) -> Option<MaterialModel> {
    let model = if let Some(t) = &r.loss_db {
        match table_points(v, t, "loss_db") {
            Some(pts) => MaterialModel::Empirical {
                loss_db: pts,
                reflection_loss_db: r
                    .reflection_loss_db
                    .as_ref()
                    .and_then(|t| table_points(v, t, "reflection_loss_db"))
                    .unwrap_or_default(),
            },
            None => return None,
        }
    } else if let Some(e) = &r.permittivity {
        if *e.get_ref() < 1.0 {
            v.error(e.span(), "relative permittivity must be 1 or more", None);
            return None;
        }
        let sigma = r.conductivity.as_ref().map(|c| *c.get_ref()).unwrap_or(0.0);
        if sigma < 0.0 {
            if let Some(c) = &r.conductivity {
                v.error(c.span(), "conductivity must be zero or more (S/m)", None);
            }
            return None;
        }
        MaterialModel::CustomSlab {
            eps_real: *e.get_ref(),
            sigma_s_per_m: sigma,
        }
    } else if let Some(i) = &r.itu {
        match rfsite_physics::p2040::material(i.get_ref()) {
            Some(m) => MaterialModel::Itu(m),
            None => {
                let ids = rfsite_physics::p2040::ITU_MATERIALS.iter().map(|m| m.id);
                v.error(
                    i.span(),
                    format!("`{}` is not an ITU-R P.2040 material", i.get_ref()),
                    Some(unknown_name_hint("ITU material", i.get_ref(), ids)),
                );
                return None;
            }
        }
    } else if let Some(ls) = &r.layers {
        let mut layers = Vec::new();
        for l in ls.get_ref() {
            let lr = l.get_ref();
            let (Some(mid), Some(th)) = (&lr.material, &lr.thickness) else {
                v.error(l.span(), "a layer needs `material` and `thickness`", None);
                continue;
            };
            let Some(t) = v.length(th, "thickness", false) else {
                continue;
            };
            match lib.get(mid.get_ref()).map(|m| m.model.clone()) {
                Some(mm @ (MaterialModel::Itu(_) | MaterialModel::CustomSlab { .. })) => {
                    layers.push((mm, t))
                }
                Some(_) => v.error(
                    mid.span(),
                    format!("layer material `{}` is not a slab material", mid.get_ref()),
                    Some(
                        "layers need ITU-R P.2040 materials or site materials with `permittivity`"
                            .into(),
                    ),
                ),
                None => {
                    let hint = unknown_name_hint("material", mid.get_ref(), lib.ids());
                    v.error(
                        mid.span(),
                        format!("unknown material `{}`", mid.get_ref()),
                        Some(hint),
                    );
                }
            }
        }
        MaterialModel::Layered(layers)
    } else {
        return None;
    };
    Some(model)
}
