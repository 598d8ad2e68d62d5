//! The plots alone as a picture of a size the user picks, for the PNG export. The plots are laid
//! out by egui in a context of their own at that size (nothing else of the window is in it), its
//! shapes tessellated by egui, and the triangles filled here in software. So the export needs no
//! screenshot, no graphics card and no window of that size, comes out the same on every machine,
//! and leaves the window on screen undisturbed.
//!
//! A hand-written fill rather than a crate: egui's meshes need per-vertex colours multiplied by
//! one texture, which general 2D rasterisers (path fillers) do not offer; the fill below is that
//! and nothing more.

use std::collections::HashMap;
use std::sync::Arc;

use egui::epaint::{ClippedPrimitive, ImageDelta, Primitive, Vertex};
use egui::{
    Color32, ColorImage, Context, Pos2, RawInput, Rect, Style, TextureId, Theme, Ui, ViewportId,
    ViewportInfo, vec2,
};

/// Pixels per point of a picture `width_px` wide: laid out as about 1280 points wide (the
/// window's usual width), never below 1 (small pictures stay legible) nor above 4.
pub fn pixels_per_point(width_px: u32) -> f32 {
    (width_px as f32 / 1280.0).clamp(1.0, 4.0)
}

/// A picture in premultiplied RGBA, row by row from the top.
pub struct Picture {
    pub width: usize,
    pub height: usize,
    pub rgba: Vec<[f32; 4]>,
}

impl Picture {
    /// The pixel at column `x`, row `y`, as 8-bit straight (unmultiplied) RGBA.
    pub fn pixel(&self, x: usize, y: usize) -> [u8; 4] {
        let [r, g, b, a] = self.rgba[y * self.width + x];
        let un = |c: f32| {
            if a > 0.0 {
                (c / a * 255.0).round().clamp(0.0, 255.0) as u8
            } else {
                0
            }
        };
        [un(r), un(g), un(b), (a * 255.0).round().clamp(0.0, 255.0) as u8]
    }

    /// Every pixel as 8-bit straight RGBA, for a PNG.
    pub fn to_rgba8(&self) -> Vec<u8> {
        (0..self.height)
            .flat_map(|y| (0..self.width).map(move |x| (x, y)))
            .flat_map(|(x, y)| self.pixel(x, y))
            .collect()
    }
}

/// Lays out `content` alone in a `size_px` picture with `style` (the window's look: light or
/// dark, its text sizes) and fills it. Two passes, so that what egui sizes from the previous
/// frame (plot axes) has settled.
pub fn draw(size_px: [u32; 2], dark: bool, style: Arc<Style>, mut content: impl FnMut(&mut Ui)) -> Picture {
    let ppp = pixels_per_point(size_px[0]);
    let ctx = Context::default();
    crate::ui::theme::install_text_styles(&ctx);
    ctx.set_theme(if dark { Theme::Dark } else { Theme::Light });
    ctx.set_global_style(style);
    let input = || {
        let mut raw = RawInput {
            screen_rect: Some(Rect::from_min_size(
                Pos2::ZERO,
                vec2(size_px[0] as f32, size_px[1] as f32) / ppp,
            )),
            ..RawInput::default()
        };
        raw.viewports.insert(
            ViewportId::ROOT,
            ViewportInfo {
                native_pixels_per_point: Some(ppp),
                ..ViewportInfo::default()
            },
        );
        raw
    };
    let mut textures: HashMap<TextureId, ColorImage> = HashMap::new();
    let mut last = None;
    for _ in 0..2 {
        let mut out = ctx.run_ui(input(), |ui| {
            egui::CentralPanel::default().show(ui, |ui| content(ui));
        });
        for (id, deltas) in &out.textures_delta.set {
            for delta in deltas {
                apply_delta(&mut textures, *id, delta);
            }
        }
        out.textures_delta.clear();
        last = Some(out);
    }
    let Some(out) = last else {
        unreachable!("two passes ran")
    };
    let primitives = ctx.tessellate(out.shapes, out.pixels_per_point);
    let background = ctx.global_style().visuals.panel_fill;
    fill(
        &primitives,
        &textures,
        out.pixels_per_point,
        [size_px[0] as usize, size_px[1] as usize],
        background,
    )
}

/// A texture as egui changed it: whole, or a patch at a place.
fn apply_delta(textures: &mut HashMap<TextureId, ColorImage>, id: TextureId, delta: &ImageDelta) {
    let egui::ImageData::Color(image) = &delta.image;
    match (delta.pos, textures.get_mut(&id)) {
        (Some([x0, y0]), Some(target)) => {
            let [w, h] = image.size;
            for y in 0..h {
                for x in 0..w {
                    let (tx, ty) = (x0 + x, y0 + y);
                    if tx < target.size[0] && ty < target.size[1] {
                        target.pixels[ty * target.size[0] + tx] = image.pixels[y * w + x];
                    }
                }
            }
        }
        _ => {
            textures.insert(id, (**image).clone());
        }
    }
}

fn premultiplied(c: Color32) -> [f32; 4] {
    let [r, g, b, a] = c.to_array();
    [r, g, b, a].map(|v| f32::from(v) / 255.0)
}

/// Fills egui's triangles in order over an opaque `background`, blending premultiplied colours
/// as egui's own renderers do. Triangles sharing an edge cover each pixel on it once (the
/// top-left rule), so translucent shapes show no seams.
pub fn fill(
    primitives: &[ClippedPrimitive],
    textures: &HashMap<TextureId, ColorImage>,
    ppp: f32,
    [width, height]: [usize; 2],
    background: Color32,
) -> Picture {
    let mut rgba = vec![premultiplied(background.to_opaque()); width * height];
    for p in primitives {
        let Primitive::Mesh(mesh) = &p.primitive else {
            continue;
        };
        let clip = Rect::from_min_max(
            (p.clip_rect.min.to_vec2() * ppp).to_pos2(),
            (p.clip_rect.max.to_vec2() * ppp).to_pos2(),
        )
        .intersect(Rect::from_min_size(Pos2::ZERO, vec2(width as f32, height as f32)));
        if !clip.is_positive() {
            continue;
        }
        let texture = textures.get(&mesh.texture_id);
        for tri in mesh.indices.chunks_exact(3) {
            let v = |i: u32| mesh.vertices.get(i as usize).copied();
            let (Some(a), Some(b), Some(c)) = (v(tri[0]), v(tri[1]), v(tri[2])) else {
                continue;
            };
            triangle(&mut rgba, width, clip, ppp, [a, b, c], texture);
        }
    }
    Picture { width, height, rgba }
}

/// Twice the signed area of (a, b, p): positive when p is left of a→b in y-down coordinates
/// seen as counter-clockwise.
fn edge(a: Pos2, b: Pos2, p: Pos2) -> f32 {
    (b.x - a.x) * (p.y - a.y) - (b.y - a.y) * (p.x - a.x)
}

fn triangle(
    rgba: &mut [[f32; 4]],
    width: usize,
    clip: Rect,
    ppp: f32,
    verts: [Vertex; 3],
    texture: Option<&ColorImage>,
) {
    let mut pos = verts.map(|v| (v.pos.to_vec2() * ppp).to_pos2());
    let mut verts = verts;
    let mut area = edge(pos[0], pos[1], pos[2]);
    if area.abs() < 1e-9 || !area.is_finite() {
        return;
    }
    if area < 0.0 {
        pos.swap(1, 2);
        verts.swap(1, 2);
        area = -area;
    }
    let (lo, hi) = (
        pos[0].min(pos[1]).min(pos[2]).max(clip.min),
        pos[0].max(pos[1]).max(pos[2]).min(clip.max),
    );
    if lo.x >= hi.x || lo.y >= hi.y {
        return;
    }
    // An edge whose pixels on it belong to this triangle: the top edge (horizontal, the
    // triangle below it) and left edges.
    let owns = |a: Pos2, b: Pos2| {
        let d = b - a;
        (d.y == 0.0 && d.x < 0.0) || d.y > 0.0
    };
    let edges = [(1, 2), (2, 0), (0, 1)];
    let owned = edges.map(|(i, j)| owns(pos[i], pos[j]));
    let colors = verts.map(|v| premultiplied(v.color));
    // Pixel centres (x + 0.5, y + 0.5) within the bounding box and the clip.
    let x0 = (lo.x - 0.5).ceil().max(0.0) as usize;
    let y0 = (lo.y - 0.5).ceil().max(0.0) as usize;
    let x_end = ((hi.x - 0.5).floor() + 1.0).max(0.0) as usize;
    let y_end = ((hi.y - 0.5).floor() + 1.0).max(0.0) as usize;
    for y in y0..y_end {
        for x in x0..x_end {
            let p = Pos2::new(x as f32 + 0.5, y as f32 + 0.5);
            let mut w = [0.0f32; 3];
            let mut inside = true;
            for (k, (i, j)) in edges.iter().enumerate() {
                let e = edge(pos[*i], pos[*j], p);
                if e < 0.0 || (e == 0.0 && !owned[k]) {
                    inside = false;
                    break;
                }
                w[k] = e / area;
            }
            if !inside {
                continue;
            }
            let mut src = [0.0f32; 4];
            for (ch, s) in src.iter_mut().enumerate() {
                *s = w[0] * colors[0][ch] + w[1] * colors[1][ch] + w[2] * colors[2][ch];
            }
            if let Some(t) = texture {
                let u = w[0] * verts[0].uv.x + w[1] * verts[1].uv.x + w[2] * verts[2].uv.x;
                let v = w[0] * verts[0].uv.y + w[1] * verts[1].uv.y + w[2] * verts[2].uv.y;
                let tx = ((u * t.size[0] as f32) as usize).min(t.size[0].saturating_sub(1));
                let ty = ((v * t.size[1] as f32) as usize).min(t.size[1].saturating_sub(1));
                if let Some(texel) = t.pixels.get(ty * t.size[0] + tx) {
                    let tc = premultiplied(*texel);
                    for ch in 0..4 {
                        src[ch] *= tc[ch];
                    }
                }
            }
            let Some(dst) = rgba.get_mut(y * width + x) else {
                continue;
            };
            let keep = 1.0 - src[3];
            for ch in 0..4 {
                dst[ch] = src[ch] + dst[ch] * keep;
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use egui::epaint::Mesh;

    fn square(rect: Rect, color: Color32) -> ClippedPrimitive {
        let mut mesh = Mesh::default();
        mesh.add_colored_rect(rect, color);
        ClippedPrimitive {
            clip_rect: Rect::EVERYTHING,
            primitive: Primitive::Mesh(mesh),
        }
    }

    #[test]
    fn a_rectangle_covers_exactly_its_pixels_and_translucency_blends_once() {
        // Two triangles of a rectangle share a diagonal: half-transparent white over black must
        // give one even grey everywhere (a pixel covered twice would be lighter).
        let rect = Rect::from_min_max(Pos2::new(2.0, 1.0), Pos2::new(6.0, 4.0));
        let half = Color32::from_white_alpha(128);
        let white = HashMap::from([(TextureId::default(), ColorImage::filled([1, 1], Color32::WHITE))]);
        let pic = fill(&[square(rect, half)], &white, 1.0, [8, 6], Color32::BLACK);
        for y in 0..6 {
            for x in 0..8 {
                let inside = (2..6).contains(&x) && (1..4).contains(&y);
                let expected = if inside { 128 } else { 0 };
                assert_eq!(pic.pixel(x, y)[0], expected, "pixel {x},{y}");
                assert_eq!(pic.pixel(x, y)[3], 255);
            }
        }
        // At 2 pixels per point the same rectangle covers twice the pixels each way.
        let pic = fill(
            &[square(rect, Color32::RED)],
            &white,
            2.0,
            [16, 12],
            Color32::BLACK,
        );
        let red = (0..12)
            .flat_map(|y| (0..16).map(move |x| (x, y)))
            .filter(|&(x, y)| pic.pixel(x, y) == [255, 0, 0, 255])
            .count();
        assert_eq!(red, 8 * 6);
    }
}
