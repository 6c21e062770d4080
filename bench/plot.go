package bench

import (
	"fmt"
	"io"
	"path/filepath"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/plotutil"
	"gonum.org/v1/plot/vg"
)

// series is one line of a plot.
type series struct {
	name string
	xy   plotter.XYs
}

// newPlot returns a plot with the title and axis labels, log-scaled as asked.
func newPlot(title, x, y string, logX, logY bool) *plot.Plot {
	p := plot.New()
	p.Title.Text = title
	p.X.Label.Text = x
	p.Y.Label.Text = y
	if logX {
		p.X.Scale = plot.LogScale{}
		p.X.Tick.Marker = plot.LogTicks{Prec: -1}
	}
	if logY {
		p.Y.Scale = plot.LogScale{}
		p.Y.Tick.Marker = plot.LogTicks{Prec: -1}
	}
	p.Legend.Top = true
	return p
}

// addSeries adds lines with points; non-positive values are dropped on log axes.
func addSeries(p *plot.Plot, list []series, logX, logY bool) error {
	for i, s := range list {
		var xy plotter.XYs
		for _, v := range s.xy {
			if (logX && !(v.X > 0)) || (logY && !(v.Y > 0)) {
				continue
			}
			xy = append(xy, v)
		}
		if len(xy) == 0 {
			continue
		}
		line, points, err := plotter.NewLinePoints(xy)
		if err != nil {
			return err
		}
		line.Color = plotutil.Color(i)
		line.Dashes = plotutil.Dashes(i / 8)
		points.Color = plotutil.Color(i)
		points.Shape = plotutil.Shape(i)
		p.Add(line, points)
		p.Legend.Add(s.name, line, points)
	}
	return nil
}

func savePlot(p *plot.Plot, path string) error {
	w, err := p.WriterTo(7*vg.Inch, 5*vg.Inch, "svg")
	if err != nil {
		return err
	}
	return writeFileAtomic(path, func(out io.Writer) error {
		_, err := w.WriteTo(out)
		return err
	})
}

// writePlots writes the SVG plots of the report into dir.
func (r *Report) writePlots(dir string) error {
	for _, ps := range r.Config.PointSets {
		var nnz, rho, solve []series
		for _, kn := range r.Config.Kernels {
			for _, pat := range []string{"radius", "neighbors", "greedy", "joint"} {
				var a, b, c plotter.XYs
				for _, x := range r.Factors {
					if x.PointSet != ps || x.Kernel != kn || x.Pattern != pat {
						continue
					}
					a = append(a, plotter.XY{X: x.NNZPerColumn, Y: x.KL})
					c = append(c, plotter.XY{X: x.NNZPerColumn, Y: x.SolveError})
					if pat == "radius" {
						b = append(b, plotter.XY{X: x.Parameter, Y: x.KL})
					}
				}
				name := kn + " " + map[string]string{"radius": "ρ", "neighbors": "m", "greedy": "greedy m", "joint": "joint greedy m"}[pat]
				if len(a) > 0 {
					nnz = append(nnz, series{name, a})
					solve = append(solve, series{name, c})
				}
				if len(b) > 0 {
					rho = append(rho, series{kn, b})
				}
			}
		}
		if len(nnz) == 0 {
			continue
		}
		for _, pl := range []struct {
			file, title, x, y string
			list              []series
			logX              bool
		}{
			{"kl_vs_nnz_" + ps + ".svg", fmt.Sprintf("KL divergence against nnz per column, %s points, N = %d", ps, r.Config.N), "nonzeros per column", "KL(N(0,Θ) ‖ N(0,Θ̃))", nnz, true},
			{"kl_vs_rho_" + ps + ".svg", fmt.Sprintf("KL divergence against ρ (radius pattern), %s points", ps), "ρ", "KL", rho, false},
			{"solve_vs_nnz_" + ps + ".svg", fmt.Sprintf("Solve error against nnz per column, %s points", ps), "nonzeros per column", "‖Θ̃⁻¹b − Θ⁻¹b‖/‖Θ⁻¹b‖", solve, true},
		} {
			p := newPlot(pl.title, pl.x, pl.y, pl.logX, true)
			if err := addSeries(p, pl.list, pl.logX, true); err != nil {
				return err
			}
			if err := savePlot(p, filepath.Join(dir, pl.file)); err != nil {
				return err
			}
		}
	}
	if len(r.Scaling) == 0 {
		return nil
	}
	var times, speed []series
	for _, pat := range []string{"rho=3", "m=30"} {
		ns, secs := r.scalingSeries(pat)
		var a, b plotter.XYs
		for i := range ns {
			a = append(a, plotter.XY{X: ns[i], Y: secs[i]})
		}
		for _, s := range r.Scaling {
			if s.Pattern == pat && s.SpeedUp > 0 {
				b = append(b, plotter.XY{X: float64(s.N), Y: s.SpeedUp})
			}
		}
		slope, _ := FitSlope(ns, secs)
		times = append(times, series{fmt.Sprintf("kchol %s (fitted slope %.2f)", pat, slope), a})
		speed = append(speed, series{"kchol " + pat, b})
	}
	var dense plotter.XYs
	seen := map[int]bool{}
	for _, s := range r.Scaling {
		if s.DenseSeconds > 0 && !seen[s.N] {
			seen[s.N] = true
			dense = append(dense, plotter.XY{X: float64(s.N), Y: s.DenseSeconds})
		}
	}
	if len(dense) > 0 {
		var xs, ys []float64
		for _, v := range dense {
			xs, ys = append(xs, v.X), append(ys, v.Y)
		}
		slope, _ := FitSlope(xs, ys)
		times = append(times, series{fmt.Sprintf("gonum dense Cholesky (fitted slope %.2f)", slope), dense})
	}
	p := newPlot("Time against N (uniform 2D, Matérn 3/2)", "N", "seconds", true, true)
	if err := addSeries(p, times, true, true); err != nil {
		return err
	}
	if err := savePlot(p, filepath.Join(dir, "time_vs_n.svg")); err != nil {
		return err
	}
	p = newPlot("Speed-up over gonum's dense Cholesky", "N", "dense time / kchol time", true, true)
	if err := addSeries(p, speed, true, true); err != nil {
		return err
	}
	return savePlot(p, filepath.Join(dir, "speedup_vs_n.svg"))
}
