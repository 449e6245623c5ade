// Package report turns a bandsolve output folder into report.html: one
// self-contained page (styles and figures inline, no file or network
// reference) that tells what was found and how sure it is.
//
// The report is built from the folder's files only — summary.json,
// spectra.csv, profiles.csv, singular_values.csv, iterations.csv and,
// when present, efa.csv, uniqueness.csv (bands.csv in older folders), kinetics.csv, intervals.csv,
// demo_check.csv, maps.csv, the as-run record and the manifest — never from
// a run's memory, so `bandsolve report OUT` rebuilds the very same bytes.
// Every optional file is read tolerantly: a missing one removes its figure,
// an unreadable one is named under "Left out of this report".
//
// maps.csv is written for the report (MapsCSV): the data matrix, the
// difference spectra and the residuals D − C Sᵀ at no more than MapTimes
// times × MapPoints points, picked at evenly spaced indices.
//
// Figures are drawn with gonum.org/v1/plot as SVG, 16 cm wide with 10–12 pt
// text. Conventions of the trade (common practice): infrared wavenumber
// axes and chemical shifts run high → low left to right; every axis names
// its unit; signed spectra are drawn about a zero line. Component colours
// are the Okabe–Ito set (Okabe & Ito 2008), each with its own dash pattern;
// the maps use a blue–white–vermilion diverging scale centred on zero and
// time is a dark-to-light sequential scale, both legible to readers with
// colour-vision deficiencies and in grey print.
package report
