//! Development aid: draws the branch traces dumped by `SLEEK_DUMP=FILE` (lines `branch x y`)
//! to a PNG, one colour per branch, in an optional window.
//!
//! ```text
//! cargo run --release --example trace_dump_view -- DUMP OUT.png [X0 X1 Y0 Y1]
//! ```

use plotters::prelude::*;

fn main() -> Result<(), Box<dyn std::error::Error>> {
    let args: Vec<String> = std::env::args().skip(1).collect();
    if args.len() != 2 && args.len() != 6 {
        return Err("usage: trace_dump_view DUMP OUT.png [X0 X1 Y0 Y1]".into());
    }
    let (x0, x1, y0, y1) = if args.len() == 6 {
        (
            args[2].parse::<f64>()?,
            args[3].parse::<f64>()?,
            args[4].parse::<f64>()?,
            args[5].parse::<f64>()?,
        )
    } else {
        (-1.02, 1.02, -1.02, 1.02)
    };

    let text = std::fs::read_to_string(&args[0])?;
    let mut branches: Vec<(u64, Vec<(f64, f64)>)> = Vec::new();
    for line in text.lines() {
        let v: Vec<&str> = line.split_whitespace().collect();
        if v.len() != 3 {
            continue;
        }

        // (Lines written by two threads at once can be garbled: skipped.)
        let (Ok(id), Ok(x), Ok(y)) = (
            v[0].parse::<u64>(),
            v[1].parse::<f64>(),
            v[2].parse::<f64>(),
        ) else {
            continue;
        };
        let p = (x, y);
        match branches.last_mut() {
            Some(b) if b.0 == id => b.1.push(p),
            _ => branches.push((id, vec![p])),
        }
    }
    let (w, h) = (1400u32, 1400u32);
    let mut rgb = vec![255u8; (w * h * 3) as usize];
    {
        let root = BitMapBackend::with_buffer(&mut rgb, (w, h)).into_drawing_area();
        root.fill(&WHITE)?;
        let mut chart = ChartBuilder::on(&root).build_cartesian_2d(x0..x1, y0..y1)?;
        chart.draw_series(std::iter::once(PathElement::new(
            (0..=400)
                .map(|k| {
                    let t = k as f64 / 400.0 * std::f64::consts::TAU;
                    (t.cos(), t.sin())
                })
                .collect::<Vec<_>>(),
            BLACK,
        )))?;
        for (i, (_, pts)) in branches.iter().enumerate() {
            let c = Palette99::pick(i).to_rgba();
            chart.draw_series(
                pts.windows(2)
                    .map(|w| PathElement::new(vec![w[0], w[1]], c.stroke_width(1))),
            )?;
        }
        root.present()?;
    }
    image::RgbImage::from_raw(w, h, rgb)
        .ok_or("buffer")?
        .save(&args[1])?;
    println!(
        "{} branches, {} points",
        branches.len(),
        branches.iter().map(|b| b.1.len()).sum::<usize>()
    );
    Ok(())
}
