// Package jcamp reads and writes spectra in JCAMP-DX, the open text format
// for spectra now kept by IUPAC, defined by R. S. McDonald and P. A. Wilks,
// "JCAMP-DX: A Standard Form for Exchange of Infrared Spectra in Computer
// Readable Form", Appl. Spectrosc. 42 (1988) 151–162 (version 4.24; later
// files say 5.01). Page numbers and section details here are from memory;
// the decoding was checked against an independent reader, see the tests.
//
// # Format
//
// A file is a sequence of labelled data records "##LABEL=value". A value runs
// on over the following lines until the next "##". Labels are compared after
// upper-casing and removing spaces, dashes, slashes and underscores, so
// "##X UNITS=" and "##XUNITS=" are one label. "$$" starts a comment that runs
// to the end of the line. A block opens with ##TITLE= and closes with ##END=;
// a block with ##DATA TYPE=LINK holds ##BLOCKS= nested blocks.
//
// The spectrum itself is one of two tabular records:
//
//   - ##XYDATA=(X++(Y..Y)): each line holds the abscissa of its first
//     ordinate followed by a run of ordinates at equally spaced X. The
//     abscissae of the points are not read from the lines: point i lies at
//     FIRSTX + i*(LASTX-FIRSTX)/(NPOINTS-1). The line abscissa, multiplied by
//     XFACTOR, serves only as a check, and ordinates are multiplied by YFACTOR.
//   - ##XYPOINTS=(XY..XY): explicit X,Y pairs, for uneven spacing.
//
// Ordinates may be written in AFFN (free-format decimal numbers separated by
// blanks or commas), PAC (numbers delimited by their sign) or the ASCII
// squeezed difference forms (ASDF), where a pseudo-digit replaces the sign and
// leading digit of an integer:
//
//	SQZ  (value)       @ A B C D E F G H I  =  0 1 … 9,  a … i  = -1 … -9
//	DIF  (difference)  % J K L M N O P Q R  =  0 1 … 9,  j … r  = -1 … -9
//	DUP  (repeat count)  S T U V W X Y Z s  =  1 … 9
//
// A DIF token adds to the previous ordinate; a DUP token repeats the previous
// token (value or difference) until the given total count is reached. When a
// line ends in DIF form, the first ordinate of the next line repeats the last
// ordinate of that line as a check ("Y check"); this reader verifies it and
// drops the repeat, and likewise checks each line abscissa, NPOINTS, DELTAX
// and FIRSTY so that a truncated or corrupted file is reported, not silently
// misread.
//
// An exponent in AFFN must carry its sign ("1.5E-03"), because a bare "E5"
// after a number is the SQZ token for +55.
//
// ##PEAK TABLE records (band lists) and ##NTUPLES records (multi-page data,
// mostly NMR) are not spectra on a regular axis: blocks holding only those are
// skipped, and a file with nothing else is rejected with an error saying so.
//
// Write produces version 5.01 AFFN files with lines of at most 80 characters
// that Parse reads back.
package jcamp
