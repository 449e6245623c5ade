package report

// pageTemplate is report.html. Everything it needs is inside it: styles,
// figures (inline SVG) and tables; it refers to no file and no network.
const pageTemplate = `<!DOCTYPE html>
<html lang="en">
<head>
<meta charset="utf-8">
<meta name="viewport" content="width=device-width, initial-scale=1">
<meta name="generator" content="{{.S.Tool}}">
<title>bandsolve report</title>
<style>
:root { --ink: #1b1b1b; --muted: #5a5a5a; --rule: #d0d0d0; --panel: #f6f6f3; --warn: #8a3b00; --warnbg: #fff3e6; }
* { box-sizing: border-box; }
body { font-family: "Liberation Sans", "DejaVu Sans", Arial, sans-serif; color: var(--ink); margin: 0 auto; max-width: 1000px; padding: 1.2rem 1.4rem 3rem; line-height: 1.45; font-size: 15px; }
h1 { font-size: 1.6rem; margin: 0 0 .2rem; }
h2 { font-size: 1.2rem; margin: 2rem 0 .6rem; padding-bottom: .2rem; border-bottom: 2px solid var(--ink); }
h3 { font-size: 1.02rem; margin: 1.2rem 0 .3rem; }
.sub { color: var(--muted); margin: 0 0 1rem; }
.findings { background: var(--panel); border-left: 5px solid #0072b2; padding: .7rem 1rem; }
.findings li { margin: .25rem 0; }
.warnings { background: var(--warnbg); border-left: 5px solid #d55e00; padding: .7rem 1rem; color: var(--warn); }
ul { padding-left: 1.2rem; margin: .3rem 0; }
table { border-collapse: collapse; margin: .4rem 0 1rem; width: 100%; font-size: .93rem; }
th, td { text-align: left; vertical-align: top; padding: .28rem .5rem; border-bottom: 1px solid var(--rule); }
th { background: var(--panel); font-weight: 600; }
td.n { font-variant-numeric: tabular-nums; white-space: nowrap; }
.small { font-size: .85rem; color: var(--muted); }
figure { margin: .6rem 0 1.6rem; page-break-inside: avoid; break-inside: avoid; }
figure > svg { width: 100%; max-width: 820px; height: auto; display: block; }
figcaption { font-size: .92rem; }
figcaption b { display: block; font-size: 1rem; margin-bottom: .15rem; }
.legend { display: flex; flex-wrap: wrap; gap: .2rem 1.1rem; margin: .2rem 0 .3rem; font-size: .9rem; }
.legend span { white-space: nowrap; }
svg.key { vertical-align: middle; margin-right: .25rem; }
pre { background: var(--panel); padding: .6rem .8rem; overflow-x: auto; font-size: .85rem; white-space: pre-wrap; }
nav { font-size: .9rem; margin: .4rem 0 1rem; }
nav a { color: #0072b2; margin-right: .8rem; }
@media print { body { max-width: none; font-size: 11pt; } nav { display: none; } h2 { break-after: avoid; } }
</style>
</head>
<body>
<header>
<h1>bandsolve report</h1>
<p class="sub">{{.S.Tool}} · {{.S.Spectra}} spectra × {{.S.Points}} points{{if .S.Experiments}} · input: {{range $i, $e := .S.Experiments}}{{if $i}}, {{end}}{{$e}}{{end}}{{end}}</p>
<nav><a href="#findings">Findings</a><a href="#summary">Summary</a>{{range .Sections}}<a href="#{{index .Figures 0 | figAnchor}}">{{.Title}}</a>{{end}}<a href="#record">Record</a></nav>
</header>

<h2 id="findings">What was found</h2>
<div class="findings"><ul>
{{range .Findings}}<li>{{tx . $.TimeUnit}}</li>
{{end}}</ul></div>
{{if or .S.Warnings .Checks}}
<h3>Warnings</h3>
<div class="warnings"><ul>
{{range .S.Warnings}}<li>{{tx . $.TimeUnit}}</li>
{{end}}{{range .Checks}}<li>{{tx . $.TimeUnit}}</li>
{{end}}</ul></div>
{{end}}
{{if .S.OutlierSpectra}}<h3>Spectra set aside</h3>
<ul>{{range .S.OutlierSpectra}}<li>t = {{tm .Time $.TimeUnit}} {{$.TimeUnit}}{{if .Source}} ({{.Source}}){{end}}: {{tx .Reason $.TimeUnit}}</li>{{end}}</ul>{{end}}
{{if .S.Advice}}<h3>Advice</h3>
<ul>{{range .S.Advice}}<li>{{tx . $.TimeUnit}}</li>{{end}}</ul>{{end}}
{{if .S.Notes}}<h3>Notes</h3>
<ul>{{range .S.Notes}}<li>{{tx . $.TimeUnit}}</li>{{end}}</ul>{{end}}

<h2 id="summary">Summary</h2>
<table>
<tr><th>mode</th><td>{{.S.Mode}}{{if .S.ModeReason}} <span class="small">— {{tx .S.ModeReason $.TimeUnit}}</span>{{end}}</td></tr>
<tr><th>rank estimate</th><td>{{.S.RankEstimate}}{{if .S.RankReason}} <span class="small">— {{tx .S.RankReason $.TimeUnit}}</span>{{end}}</td></tr>
{{if .S.DifferenceRank}}<tr><th>rank of the difference spectra</th><td>{{deref .S.DifferenceRank}}{{if .S.DifferenceRankReason}} <span class="small">— {{tx .S.DifferenceRankReason $.TimeUnit}}</span>{{end}}</td></tr>{{end}}
{{if .S.Baseline}}<tr><th>baseline</th><td>{{.S.Baseline}}{{if .S.BaselineReason}} <span class="small">— {{.S.BaselineReason}}</span>{{end}}</td></tr>{{end}}
<tr><th>components resolved</th><td>{{.S.Components}}{{if .S.ComponentNames}} ({{range $i, $n := .S.ComponentNames}}{{if $i}}, {{end}}{{$n}}{{end}}){{end}}</td></tr>
<tr><th>lack of fit</th><td class="n">{{num .S.LackOfFitPercent}} %{{if gt .S.NoiseLackOfFitPercent 0.0}} <span class="small">(noise alone: {{num .S.NoiseLackOfFitPercent}} %)</span>{{end}}</td></tr>
<tr><th>explained variance</th><td class="n">{{num7 .S.ExplainedVariancePercent}} %</td></tr>
<tr><th>iterations</th><td>{{.S.Iterations}}, {{if .S.Converged}}converged{{else}}<b>not converged</b>{{end}}</td></tr>
<tr><th>noise σ</th><td class="n">{{num .S.NoiseSigma}} absorbance <span class="small">({{.S.NoiseSource}}; noise edge {{num .S.NoiseEdge}})</span></td></tr>
<tr><th>constraints</th><td>{{if .S.Constraints}}{{range $i, $c := .S.Constraints}}{{if $i}}; {{end}}{{$c}}{{end}}{{else if eq .S.Mode "species"}}non-negative spectra and concentrations; closure {{.S.Closure}}{{else}}non-negative extents, zero at the reference and before the reaction; signed reaction spectra{{end}}</td></tr>
<tr><th>initial estimate</th><td>{{.S.InitialEstimate}}</td></tr>
<tr><th>times shown in</th><td>{{.TimeNote}}</td></tr>
<tr><th>factor analysis</th><td>{{.S.SVDMethod}} SVD{{if .S.Compressed}}; iterations on the compressed matrix{{end}}</td></tr>
</table>
{{if .S.RankCriteria}}
<h3>Rank criteria</h3>
<table>
<tr><th>criterion</th><th>estimate</th><th>verdict</th><th>evidence</th><th>method</th></tr>
{{range .S.RankCriteria}}<tr><td>{{.Name}}</td><td class="n">{{if .AtLeast}}≥ {{end}}{{.Estimate}}</td><td>{{verdict . $.S.RankEstimate}}</td><td>{{.Detail}}</td><td class="small">{{.Source}}</td></tr>
{{end}}</table>{{end}}
{{if .S.ConstraintChecks}}
<h3>What each constraint cost</h3>
<table>
<tr><th>constraint</th><th>{{if eq .S.NoiseWeights "noise"}}weighted {{end}}lack of fit with it / %</th><th>without it / %</th><th>cost / percentage points</th></tr>
{{range .S.ConstraintChecks}}<tr><td>{{.Constraint}}</td><td class="n">{{num .ShownWith}}</td><td class="n">{{num .ShownWithout}}</td><td class="n">{{num (sub .ShownWith .ShownWithout)}}</td></tr>
{{end}}</table>
<p class="small">A constraint the data obey costs next to nothing; a large cost means the data disagree with it (for closure: dilution, sampling, a species without bands).{{if eq .S.NoiseWeights "noise"}} The lack of fit here is weighted by the noise, 100·√(Σ w r² / Σ w d²) with w = 1/σ² per point and d the data as given, as in the curve of the iterations (whose last value is the first column's), so it differs from the Summary's unweighted lack of fit.{{end}}</p>{{end}}
{{if .S.Kinetics}}{{with .S.Kinetics}}
<h3>Kinetics: {{.Model}}</h3>
<table>
<tr><th>fit</th><th>step</th><th>k</th><th>standard error</th><th>half-life / {{$.TimeUnit}}</th></tr>
{{range $.Fits}}{{$fit := .}}{{range .Rates}}<tr><td>{{$fit.Method}}{{if and $fit.Reported (gt (len $.Fits) 1)}} (reported){{end}}</td><td>{{.Step}}</td><td class="n">{{num .K}} {{unit .Unit}}</td><td class="n">{{if .NotDetermined}}not determined{{else}}{{num .StdErr}} {{unit .Unit}}{{end}}</td><td class="n">{{if gt .HalfLife 0.0}}{{num .HalfLife}}{{else}}–{{end}}</td></tr>
{{end}}{{with .Sum}}<tr><td>{{$fit.Method}}{{if and $fit.Reported (gt (len $.Fits) 1)}} (reported){{end}}</td><td>{{.Step}} (determined)</td><td class="n">{{num .K}} {{unit .Unit}}</td><td class="n">{{num .StdErr}} {{unit .Unit}}</td><td class="n">–</td></tr>
{{end}}{{with .T0}}<tr><td>{{$fit.Method}}{{if and $fit.Reported (gt (len $.Fits) 1)}} (reported){{end}}</td><td>start time t0, fitted within {{num .Lower}}–{{num .Upper}} {{.Unit}}{{if .AtEnd}} (ran to the {{.AtEnd}} of that range){{end}}</td><td class="n">{{num .T0}} {{.Unit}}</td><td class="n">{{if .NotDetermined}}not determined{{else}}{{num .StdErr}} {{.Unit}}{{end}}</td><td class="n">–</td></tr>
{{end}}{{end}}</table>
<p class="small">{{if .Method}}The rate constants summary.json reports are the {{.Method}} fit's{{if gt (len $.Fits) 1}}; every fit made is shown, as on the terminal{{end}}. {{end}}{{if .MapSource}}Species ↔ components: {{range $i, $m := .Map}}{{if $i}}, {{end}}{{$m.Name}} = component {{$m.Component}}{{end}} ({{.MapSource}}). {{end}}{{perTime .ConcentrationUnit $.TimeUnit}}</p>{{end}}{{end}}
{{if .S.Uniqueness}}
<h3>Uniqueness ranges (share of the signal ‖c sᵀ‖ / ‖C Sᵀ‖)</h3>
<table>
<tr><th>component</th><th>smallest share</th><th>largest share</th></tr>
{{range .S.Uniqueness}}<tr><td>{{.Component}}</td><td class="n">{{num .Min}}</td><td class="n">{{share .Max}}</td></tr>
{{end}}</table>{{end}}
{{if not .More.Empty}}{{with .More}}
<h3>More results</h3>
{{if .Rows}}<table>
{{range .Rows}}<tr><th>{{index . 0}}</th><td>{{index . 1}}</td></tr>
{{end}}</table>{{end}}
{{if .EFA}}<h4>When EFA sees each component (evolving factor analysis)</h4>
<table>
<tr><th>component</th><th>rises above what EFA can see at / {{$.TimeUnit}}</th><th>falls below what EFA can see at / {{$.TimeUnit}}</th></tr>
{{range .EFA}}<tr><td>{{.Component}}</td><td class="n">{{.From}}</td><td class="n">{{.To}}</td></tr>
{{end}}</table>
<p class="small">{{.EFANote}}</p>{{end}}
{{if .Factors}}<h4>Factors above the noise that are not components</h4>
<table>
<tr><th>factor</th><th>what it is</th><th>share of the signal / %</th><th>in the spectra at / {{$.TimeUnit}}</th><th>how it looks</th><th>refitted as one more component</th></tr>
{{range .Factors}}<tr><td class="n">{{.Factor}}</td><td>{{.What}}</td><td class="n">{{.Share}}</td><td class="n">{{if .Times}}{{.Times}}{{else}}–{{end}}</td><td class="small">{{.Looks}}</td><td class="small">{{if .Refit}}{{.Refit}}{{else}}not refitted{{end}}</td></tr>
{{end}}</table>{{end}}
{{if .Raw}}<h4>Other keys of summary.json</h4>
<table>
{{range .Raw}}<tr><th>{{index . 0}}</th><td>{{index . 1}}</td></tr>
{{end}}</table>{{end}}{{end}}{{end}}
{{with .F.DemoCheck}}
<h3>Demo: resolved against the invented truth</h3>
<table>
<tr>{{range .Header}}<th>{{.}}</th>{{end}}</tr>
{{range .Text}}<tr>{{range .}}<td>{{.}}</td>{{end}}</tr>
{{end}}</table>{{end}}

{{range .Sections}}
<h2 id="{{index .Figures 0 | figAnchor}}">{{.Title}}</h2>
{{range .Figures}}
<figure id="{{.ID}}">
{{.SVGHTML}}
{{if .Items}}<div class="legend">{{range .Items}}<span>{{.Sample}}{{.Label}}</span>{{end}}</div>{{end}}
<figcaption><b>{{.Title}}</b>{{.Caption}}</figcaption>
</figure>
{{end}}{{end}}

<h2 id="record">Record</h2>
<h3>Files in this folder</h3>
<p class="small">{{range $i, $f := .F.Files}}{{if $i}} · {{end}}{{$f}}{{end}}</p>
{{if .Problems}}<h3>Left out of this report</h3>
<ul>{{range .Problems}}<li>{{.}}</li>{{end}}</ul>{{end}}
<h3>As-run settings</h3>
{{if .F.AsRun}}<p class="small">{{.F.AsRun.Name}}{{if .AsRunDropped}} ({{.AsRunDropped}} line(s) with a date or time left out; see the file){{end}}</p>
<pre>{{.AsRun}}</pre>{{else}}<p class="small">No as-run record in this folder.</p>{{end}}
<h3>Manifest</h3>
{{if .F.Manifest}}<p class="small">{{.F.Manifest.Name}}{{if .ManifestDropped}} ({{.ManifestDropped}} entr(ies) that change from run to run, such as the start time, left out; see the file){{end}}</p>
{{if .ManifestRows}}<table>{{range .ManifestRows}}<tr><th>{{index . 0}}</th><td><code>{{index . 1}}</code></td></tr>
{{end}}</table>{{else}}<pre>{{.ManifestText}}</pre>{{end}}
{{else}}<p class="small">No manifest in this folder.</p>{{end}}
<p class="small">This report was built from the files of the folder alone; <code>bandsolve report OUT</code> rebuilds it. {{.FigureCount}} figure(s).</p>
</body>
</html>
`
