//! One service designed floor by floor: each failing floor gets the fewest new antennas
//! the search finds to make it pass its rule set; every chosen antenna's level is added
//! on every floor (inter-floor contributions count) before the next floor is looked at.

use rayon::prelude::*;
use rfsite_design::search::{self, Combine as SearchCombine, Problem};
use rfsite_geometry::Point2;
use rfsite_model::{Combine, Pattern, Service, Site, Transmitter, ZoneKind};
use rfsite_plugin::shift::shifted_level;
use rfsite_plugin::{CoverageLayer, GridSpec, Measurement, RequiredLevel};
use rfsite_plugin_grading::{grade_one_floor, FloorInput, Rule};
use rfsite_plugin_multi_wall::{FloorPredictor, FloorScratch, Scene};

use crate::candidates::{candidates, mounting, Standing};
use crate::options::DesignOptions;

/// The prediction the design uses: the graded model's scene and per-path adjustment.
pub struct Model<'a> {
    /// Scene (walls and floors with their losses).
    pub scene: &'a Scene,
    /// Extra loss per (service index, distance m), e.g. a calibration.
    pub adjust: &'a (dyn Fn(usize, f64) -> f64 + Sync),
    /// Model id of the graded layers.
    pub model: &'a str,
}

/// What one service's grading needs.
pub struct Grade<'a> {
    /// The service.
    pub svc: &'a Service,
    /// Its rule.
    pub rule: &'a Rule,
    /// Its required level.
    pub req: &'a RequiredLevel,
}

/// A new antenna of the design.
#[derive(Debug, Clone, PartialEq)]
pub struct Placed {
    /// The transmitter as predicted.
    pub tx: Transmitter,
    /// Mounting note (standing-wave peak), if any.
    pub mounting: String,
}

/// How one floor was designed.
#[derive(Debug, Clone, PartialEq)]
pub struct FloorDesign {
    /// Floor id.
    pub floor: String,
    /// Whether it passed before the design.
    pub passed_before: bool,
    /// Candidate positions tried.
    pub candidates: usize,
    /// Antennas placed on it.
    pub placed: usize,
    /// Whether it passes with the design (predicted).
    pub passes: bool,
    /// Whether the count is proven minimal by the exact search.
    pub optimal: bool,
    /// Rule-set evaluations spent.
    pub evaluations: usize,
}

/// The design of one service.
#[derive(Debug, Clone, PartialEq)]
pub struct ServiceDesign {
    /// Antennas placed, floor by floor.
    pub placed: Vec<Placed>,
    /// Per floor.
    pub floors: Vec<FloorDesign>,
}

/// Everything fixed for one service's design.
pub struct Designer<'a> {
    /// The site as it is.
    pub site: &'a Site,
    /// Service index in the site.
    pub si: usize,
    /// Prediction model.
    pub model: Model<'a>,
    /// Grading.
    pub grade: Grade<'a>,
    /// Options.
    pub options: &'a DesignOptions,
    /// Standing waves of the service.
    pub waves: &'a [Standing],
    /// The graded levels of the site as it is, per floor.
    pub base: &'a [Vec<f32>],
    /// The service's survey points.
    pub measured: &'a [&'a Measurement],
    /// Per floor, whether the grading passed it as it is (levels only rise with new
    /// antennas, so a floor that passed still passes without grading it again).
    pub passed: &'a [bool],
}

impl Designer<'_> {
    fn predictor(&self, fi: usize) -> FloorPredictor<'_> {
        FloorPredictor::new(self.site, self.model.scene, self.si, fi, self.model.adjust)
    }

    /// A new antenna of the design at `p` on floor `fi`, at the design's port power.
    pub fn antenna(&self, fi: usize, p: Point2, n: usize) -> Transmitter {
        let floor = &self.site.floors[fi];
        Transmitter {
            id: format!("N-{}-{}-{:02}", self.grade.svc.id, floor.id, n),
            service: self.grade.svc.id.clone(),
            floor: floor.id.clone(),
            position: p,
            height_m: self.options.height_m.min(floor.height_m),
            power_dbm: self.options.port_dbm,
            cable_loss_db: 0.0,
            connector_loss_db: 0.0,
            antenna_gain_dbi: self.options.gain_dbi,
            pattern: Pattern::OmniCeiling,
        }
    }

    /// The floor's survey points, each shifted by the change from the site's levels to
    /// `levels` (as the engine does for an option).
    fn shifted(&self, fi: usize, grid: &rfsite_geometry::Grid, levels: &[f32]) -> Vec<Measurement> {
        let floor = &self.site.floors[fi];
        let at = |v: &[f32], i: usize| v.get(i).map(|x| *x as f64).unwrap_or(f64::NAN);
        self.measured
            .iter()
            .filter(|m| m.floor == floor.id)
            .map(|m| {
                let mut m = (*m).clone();
                if let Some((ix, iy)) = grid.cell_of(Point2::new(m.x_m, m.y_m)) {
                    let i = iy * grid.nx + ix;
                    let before = at(&self.base[fi], i);
                    let before = if before == f64::NEG_INFINITY {
                        -400.0
                    } else {
                        before
                    };
                    m.level_dbm = shifted_level(
                        m.level_dbm,
                        before,
                        at(levels, i),
                        self.site.prediction.combine,
                    );
                }
                m
            })
            .collect()
    }

    /// Whether floor `fi` passes its rule set with `levels` and the survey points shifted.
    pub fn passes(&self, fi: usize, grid: &rfsite_geometry::Grid, levels: &[f32]) -> bool {
        let floor = &self.site.floors[fi];
        let measured = self.shifted(fi, grid, levels);
        let layer = CoverageLayer {
            floor: floor.id.clone(),
            service: self.grade.svc.id.clone(),
            model: self.model.model.to_string(),
            grid: GridSpec::from_grid(grid),
            level_dbm: levels.to_vec(),
            best_server: Vec::new(),
            servers: Vec::new(),
        };
        let inp = FloorInput {
            site: self.site,
            fi,
            svc: self.grade.svc,
            rule: self.grade.rule,
            req: self.grade.req,
            layer: Some(&layer),
            measured: measured.iter().collect(),
        };
        grade_one_floor(&inp).result.pass
    }

    /// Area weight of each grid point: critical zones weigh as much more as their target
    /// leaves less room to fail ((1 − general) / (1 − critical)); excluded zones nothing.
    fn weights(&self, fi: usize, grid: &rfsite_geometry::Grid) -> Vec<f32> {
        let floor = &self.site.floors[fi];
        let (tg, tc) = (
            self.grade.rule.target_general,
            self.grade.rule.target_critical,
        );
        let critical = ((1.0 - tg) / (1.0 - tc).max(1e-6)).clamp(1.0, 100.0) as f32;
        grid.points()
            .map(|p| match floor.zone_kind_at(p) {
                ZoneKind::Excluded => 0.0,
                ZoneKind::Critical => critical,
                ZoneKind::General => 1.0,
            })
            .collect()
    }

    fn combine(&self) -> SearchCombine {
        match self.site.prediction.combine {
            Combine::Strongest => SearchCombine::Strongest,
            Combine::PowerSum => SearchCombine::PowerSum,
        }
    }

    /// Designs every floor in order, starting from the graded levels `current` (one per
    /// floor, NaN off the floor), which are updated with each antenna placed.
    pub fn design(&self, current: &mut [Vec<f32>]) -> ServiceDesign {
        let mut out = ServiceDesign {
            placed: Vec::new(),
            floors: Vec::new(),
        };
        for fi in 0..self.site.floors.len() {
            let fd = self.design_floor(fi, current, &mut out.placed);
            out.floors.push(fd);
        }
        out
    }

    fn design_floor(
        &self,
        fi: usize,
        current: &mut [Vec<f32>],
        placed: &mut Vec<Placed>,
    ) -> FloorDesign {
        let floor = &self.site.floors[fi];
        let pred = self.predictor(fi);
        let grid = pred.grid().clone();
        let known = self.passed.get(fi).copied().unwrap_or(false);
        let changed = current[fi] != self.base[fi];
        let mut fd = FloorDesign {
            floor: floor.id.clone(),
            passed_before: known || (changed && self.passes(fi, &grid, &current[fi])),
            candidates: 0,
            placed: 0,
            passes: true,
            optimal: true,
            evaluations: usize::from(!known && changed),
        };
        if fd.passed_before {
            return fd;
        }
        let spots = candidates(floor, self.options, self.waves);
        fd.candidates = spots.len();
        let levels: Vec<Vec<f32>> = spots
            .par_iter()
            .map_init(FloorScratch::new, |sc, p| {
                pred.levels_with(&self.antenna(fi, *p, 0), None, sc)
            })
            .collect();
        let weight = self.weights(fi, &grid);
        let problem = Problem {
            base_dbm: &current[fi],
            candidates: &levels,
            weight: &weight,
            required_dbm: self.grade.req.predicted_dbm as f32,
            combine: self.combine(),
            max_antennas: self.options.max_per_floor,
            exact_budget: self.options.exact_budget,
        };
        let d = search::design(&problem, &mut |l| self.passes(fi, &grid, l));
        (fd.passes, fd.optimal) = (d.passes, d.optimal);
        fd.evaluations += d.evaluations;
        for &c in &d.chosen {
            let (at, note) = mounting(floor, self.waves, spots[c]);
            let tx = self.antenna(fi, at, placed.len() + 1);
            self.add_everywhere(&tx, current);
            placed.push(Placed { tx, mounting: note });
            fd.placed += 1;
        }
        fd
    }

    /// Adds `tx`'s level to every floor's current levels.
    fn add_everywhere(&self, tx: &Transmitter, current: &mut [Vec<f32>]) {
        let combine = self.combine();
        let added: Vec<Vec<f32>> = (0..current.len())
            .into_par_iter()
            .map(|fi| self.predictor(fi).levels(tx, None))
            .collect();
        for (cur, add) in current.iter_mut().zip(added) {
            for (c, a) in cur.iter_mut().zip(add) {
                *c = combine_two(combine, *c, a);
            }
        }
    }
}

/// Two levels combined (NaN: off the floor stays NaN).
fn combine_two(c: SearchCombine, a: f32, b: f32) -> f32 {
    if a.is_nan() {
        return a;
    }
    if b.is_nan() {
        return a;
    }
    match c {
        SearchCombine::Strongest => a.max(b),
        SearchCombine::PowerSum => {
            let mw = 10f64.powf(a as f64 / 10.0) + 10f64.powf(b as f64 / 10.0);
            (10.0 * mw.log10()) as f32
        }
    }
}
