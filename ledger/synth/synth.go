// Package synth generates realistic synthetic dives, deterministically from
// a seed, for the demo, the tests and the benchmarks: a descent at a
// plausible rate with stops, bottom time with small depth changes, an
// ascent with a stop; strain gauges that follow pressure through a
// compliance with noise and a small hysteresis; and acoustic-emission hits.
// The data are invented; nothing here describes a real hull.
package synth

import (
	"bufio"
	"fmt"
	"io"
	"math"
	"math/rand/v2"
	"strconv"
	"time"

	"hulltally/fatigue/seawater"
)

// Gauge is a simulated strain gauge.
type Gauge struct {
	Name string
	// ComplianceUEPerMPa is microstrain per MPa of gauge pressure
	// (negative: the hull shortens under external pressure).
	ComplianceUEPerMPa float64
	// Hysteresis is the fraction by which the ascent branch lags the
	// descent branch at mid-depth (0.01 = 1 %).
	Hysteresis float64
	// ResidualUE is the strain left after surfacing.
	ResidualUE float64
	// NoiseUE is the standard deviation of the gauge noise.
	NoiseUE float64
}

// Dive describes one dive to generate.
type Dive struct {
	Start       time.Time
	SampleHz    float64
	Latitude    float64
	MaxDepthM   float64
	DescentMPS  float64 // descent rate, m/s
	AscentMPS   float64 // ascent rate, m/s
	BottomS     float64 // time at the bottom, s
	SurfaceS    float64 // time logged at the surface before and after, s
	Stops       int     // stops on the way down (and one on the way up)
	StopS       float64 // length of each stop, s
	WanderM     float64 // amplitude of depth changes at the bottom, m
	DepthNoiseM float64 // sensor noise, m
	Gauges      []Gauge
	TempC       bool
	// AE: hits per hour of bottom time, and channels.
	AEChannels    []int
	AEBottomRate  float64
	AEOnsetFrac   float64 // emission starts at this fraction of the peak depth on descent (1: none before)
	AEOnsetRate   float64 // hits per hour on descent above the onset
	AmplitudeMean float64
	// AEHoldDecayS, when positive, makes the emission at the bottom die
	// away with this time constant from the start of the hold (a sound
	// hull settling); zero keeps the slow decay over the whole bottom
	// time (emission that goes on).
	AEHoldDecayS float64
	// SensorChecks writes a pencil-lead break on every channel at the
	// surface before the descent (the event column of the hits file).
	SensorChecks bool
}

// Result summarises a generated dive.
type Result struct {
	Samples   int
	MaxDepthM float64
	End       time.Time
	Hits      int
}

type segment struct {
	dur        float64
	from, to   float64 // depth at the ends
	bottom     bool
	descending bool
	ascending  bool
}

func (d *Dive) segments() []segment {
	var segs []segment
	add := func(dur, from, to float64, kind int) {
		if dur <= 0 {
			return
		}
		segs = append(segs, segment{dur: dur, from: from, to: to, bottom: kind == 1, descending: kind == 2, ascending: kind == 3})
	}
	add(d.SurfaceS, 0, 0, 0)
	z := 0.0
	for i := 1; i <= d.Stops; i++ {
		next := d.MaxDepthM * float64(i) / float64(d.Stops+1)
		add((next-z)/d.DescentMPS, z, next, 2)
		add(d.StopS, next, next, 2)
		z = next
	}
	add((d.MaxDepthM-z)/d.DescentMPS, z, d.MaxDepthM, 2)
	add(d.BottomS, d.MaxDepthM, d.MaxDepthM, 1)
	stop := d.MaxDepthM * 0.3
	add((d.MaxDepthM-stop)/d.AscentMPS, d.MaxDepthM, stop, 3)
	add(d.StopS, stop, stop, 3)
	add(stop/d.AscentMPS, stop, 0, 3)
	add(d.SurfaceS, 0, 0, 0)
	return segs
}

// Write writes the samples file to w and, when hits is not nil, the
// acoustic-emission hits file. The same seed gives the same files.
func (d *Dive) Write(w io.Writer, hits io.Writer, seed uint64) (Result, error) {
	rng := rand.New(rand.NewPCG(seed, 0x68756c6c))
	bw := bufio.NewWriterSize(w, 1<<16)
	var hw *bufio.Writer
	if hits != nil {
		hw = bufio.NewWriterSize(hits, 1<<14)
		if d.SensorChecks {
			hw.WriteString("time,channel,amplitude_db,energy,counts,duration_us,rise_us,event\n")
		} else {
			hw.WriteString("time,channel,amplitude_db,energy,counts,duration_us,rise_us\n")
		}
	}
	ev := ""
	if d.SensorChecks {
		ev = ",hit"
	}
	checked := false
	fmt.Fprintf(bw, "# synthetic dive (invented data), %.0f m, %.3g Hz\n", d.MaxDepthM, d.SampleHz)
	bw.WriteString("time,depth_m")
	for _, g := range d.Gauges {
		bw.WriteString(",strain_" + g.Name + "_ue")
	}
	if d.TempC {
		bw.WriteString(",temp_c")
	}
	bw.WriteByte('\n')

	dt := 1 / d.SampleHz
	var res Result
	var buf []byte
	t := 0.0
	wander := rng.Float64() * 2 * math.Pi
	segs := d.segments()
	total := 0.0
	for _, s := range segs {
		total += s.dur
	}
	n := int(total*d.SampleHz) + 1
	ascending := false
	peakP := seawater.DepthToMPa(d.MaxDepthM, d.Latitude)
	si, segStart := 0, 0.0
	for i := 0; i < n; i++ {
		t = float64(i) * dt
		for si < len(segs)-1 && t >= segStart+segs[si].dur {
			segStart += segs[si].dur
			si++
		}
		s := segs[si]
		frac := 0.0
		if s.dur > 0 {
			frac = math.Min((t-segStart)/s.dur, 1)
		}
		z := s.from + (s.to-s.from)*frac
		if s.bottom {
			z += d.WanderM * (math.Sin(2*math.Pi*(t-segStart)/900+wander) - math.Sin(wander)) * math.Min(1, frac*20) * math.Min(1, (1-frac)*20)
		}
		if s.ascending {
			ascending = true
		}
		noisy := z + rng.NormFloat64()*d.DepthNoiseM
		if noisy < 0 && z == 0 {
			noisy = math.Abs(noisy) * 0.2
		}
		if z > res.MaxDepthM {
			res.MaxDepthM = z
		}
		p := seawater.DepthToMPa(math.Max(z, 0), d.Latitude)
		ts := d.Start.Add(time.Duration(t * float64(time.Second)))
		buf = buf[:0]
		buf = ts.UTC().AppendFormat(buf, "2006-01-02T15:04:05.000Z07:00")
		buf = append(buf, ',')
		buf = strconv.AppendFloat(buf, round(noisy, 2), 'f', -1, 64)
		for _, g := range d.Gauges {
			e := g.ComplianceUEPerMPa * p
			if ascending {
				// The ascent branch lags: largest at mid-pressure.
				x := p / peakP
				e *= 1 + g.Hysteresis*4*x*(1-x)
				e += g.ResidualUE * (1 - x)
			}
			e += rng.NormFloat64() * g.NoiseUE
			buf = append(buf, ',')
			buf = strconv.AppendFloat(buf, round(e, 1), 'f', -1, 64)
		}
		if d.TempC {
			temp := 14 - 11*math.Min(z/1000, 1) + rng.NormFloat64()*0.02
			buf = append(buf, ',')
			buf = strconv.AppendFloat(buf, round(temp, 2), 'f', -1, 64)
		}
		buf = append(buf, '\n')
		if _, err := bw.Write(buf); err != nil {
			return res, err
		}
		if hw != nil && d.SensorChecks && !checked && t >= math.Min(10, d.SurfaceS/2) {
			// A pencil-lead break on each channel at the surface, before
			// the dive (one a second).
			checked = true
			for k, ch := range d.AEChannels {
				ct := d.Start.Add(time.Duration((t + float64(k)) * float64(time.Second)))
				fmt.Fprintf(hw, "%s,%d,%.1f,%.2f,%d,%.0f,%.0f,lead_break\n", ct.UTC().Format("2006-01-02T15:04:05.000Z07:00"), ch, 94+rng.Float64()*4, 800+rng.Float64()*200, 400+rng.IntN(100), 2000.0, 5.0)
			}
		}
		if hw != nil && len(d.AEChannels) > 0 {
			rate := 0.0 // hits per hour
			switch {
			case s.bottom && d.AEHoldDecayS > 0:
				// Emission at the start of the hold that dies away.
				rate = d.AEBottomRate * math.Exp(-(t-segStart)/d.AEHoldDecayS)
			case s.bottom:
				// Emission during the hold that decays slowly.
				rate = d.AEBottomRate * math.Exp(-3*frac)
			case s.descending && z >= d.AEOnsetFrac*d.MaxDepthM:
				rate = d.AEOnsetRate
			}
			if rate > 0 && rng.Float64() < rate*dt/3600 {
				ch := d.AEChannels[rng.IntN(len(d.AEChannels))]
				amp := math.Min(99, d.AmplitudeMean+rng.ExpFloat64()*6)
				dur := 100 + rng.Float64()*900
				rise := dur * (0.05 + 0.2*rng.Float64())
				energy := math.Pow(10, (amp-40)/20) * dur / 50
				counts := int(dur / 20 * (0.5 + rng.Float64()))
				fmt.Fprintf(hw, "%s,%d,%.1f,%.2f,%d,%.0f,%.0f%s\n", ts.UTC().Format("2006-01-02T15:04:05.000Z07:00"), ch, amp, energy, counts, dur, rise, ev)
				res.Hits++
			}
		}
	}
	res.Samples = n
	res.End = d.Start.Add(time.Duration(t * float64(time.Second)))
	if err := bw.Flush(); err != nil {
		return res, err
	}
	if hw != nil {
		if err := hw.Flush(); err != nil {
			return res, err
		}
	}
	return res, nil
}

func round(v float64, places int) float64 {
	p := math.Pow(10, float64(places))
	return math.Round(v*p) / p
}

// BenchFile writes the benchmark's dive: hours at hz with gauges strain
// columns and a temperature, t_s times and pressure in MPa (for 10 h: 1 h
// descent to 40 MPa, 4 h hold with ±0.2 MPa swell of 60 s period, 1 h
// ascent, 4 h at the surface; Gaussian pressure noise N(0, σ = 0.01 MPa)
// on every sample, the configured sensor noise, and N(0, 2 µε) on the
// gauges).
func BenchFile(w io.Writer, hours, hz float64, gauges int, seed uint64) (int, error) {
	rng := rand.New(rand.NewPCG(seed, 7))
	bw := bufio.NewWriterSize(w, 1<<20)
	bw.WriteString("t_s,pressure_mpa")
	for g := 0; g < gauges; g++ {
		fmt.Fprintf(bw, ",strain_g%d_ue", g+1)
	}
	bw.WriteString(",temp_c\n")
	n := int(hours * 3600 * hz)
	var buf []byte
	total := hours * 3600
	for i := 0; i < n; i++ {
		t := float64(i) / hz
		var p float64
		// Phases as fractions of the record: for 10 h, 1 h descent, 4 h
		// hold, 1 h ascent, 4 h at the surface.
		switch {
		case t < 0.1*total:
			p = 40 * t / (0.1 * total)
		case t < 0.5*total:
			p = 40 + 0.2*math.Sin(2*math.Pi*t/60)
		case t < 0.6*total:
			p = 40 * (1 - (t-0.5*total)/(0.1*total))
		default:
			p = 0
		}
		p += rng.NormFloat64() * 0.01
		buf = buf[:0]
		buf = strconv.AppendFloat(buf, round(t, 2), 'f', -1, 64)
		buf = append(buf, ',')
		buf = strconv.AppendFloat(buf, round(p, 4), 'f', -1, 64)
		for g := 0; g < gauges; g++ {
			buf = append(buf, ',')
			buf = strconv.AppendFloat(buf, round(-95*p*(1+0.05*float64(g))+rng.NormFloat64()*2, 1), 'f', -1, 64)
		}
		buf = append(buf, ',')
		buf = strconv.AppendFloat(buf, round(4+rng.NormFloat64()*0.05, 2), 'f', -1, 64)
		buf = append(buf, '\n')
		if _, err := bw.Write(buf); err != nil {
			return i, err
		}
	}
	return n, bw.Flush()
}
