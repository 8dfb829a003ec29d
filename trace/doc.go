// Package trace finds the layout of an ECG page, names its leads and
// follows each printed trace into calibrated samples.
//
// Input is an upright ink map (255 = trace ink, grid removed) with its
// calibration (px/mm, mm/s, mm/mV) and the calibration pulses found on the
// page; output is an ecg.Record with one signal per lead on the record's
// common time base (t = 0 at the left edge of the first trace column, just
// after the calibration pulse), NaN where a lead was not printed.
//
// # Methods
//
//   - Rows: peaks of the row ink projection profile backed by a long,
//     nearly continuous horizontal stretch of ink (projection profiles,
//     common practice). A binarised fax trace loses its flat stretches and
//     breaks into islands; a second, looser reading (gaps up to 12 mm,
//     coverage 0.3) finds such rows, kept only when they have a pulse or
//     line up with the pulse rows, so header text does not pass. 0 mV is the calibration pulse's foot where there is
//     one, else the most frequent level of the row's path (the isoelectric
//     line).
//   - Pulses: a rectangle rising 3–45 mm from the baseline at the row's
//     left end; its height replaces a default gain (snapped to 5, 10 or 20
//     mm/mV within 8 %). A page with pulses on fewer than half of its
//     rows is tried turned by 180° too, and traced turned (paths are
//     returned in the input's coordinates) when that finds more than
//     twice as many. A page without any pulse is turned when its beats
//     run backwards: the T wave follows the QRS complex, so the trace
//     strays further from its level after each complex than before it
//     (beatAsymmetry; the front end's ink balance is fooled by records
//     whose complexes point down). Without pulses the gain is the
//     assumed 10 mm/mV: a lone pulse of no printed gain is taken back.
//     The first trace column starts 2 mm after the pulse's
//     falling edge unless the printed column separators say otherwise.
//     Pulses taller than the row pitch (20 mm/mV on 12 × 1) overlap into
//     two vertical lines down the page, a ladder; the printed gains 5, 10
//     and 20 mm/mV are then tested for a full rectangle (both lines and a
//     flat top 6 % of the height from where the row's foot says) on every
//     row, and the gain that fits the most rows, less the rows where the
//     rectangle should be and is not, is read. Rungs of the ladder that
//     no row sits on are rows the profile missed, and are read there
//     (ladderRows).
//   - Row checks: a row without a pulse must span the pulse rows' stretch,
//     must leave its line (a trace's complexes; the edge of a photographed
//     sheet over the desk does not) and must not sit between two rows at
//     under 0.6 of the row pitch (a tangle of tall complexes).
//   - Layout: the number of rows and the printed column separators (tall
//     isolated strokes at 1/4, 1/2, 3/4 of the row) choose among 3 × 4 with
//     0, 1 or 3 rhythm strips, 6 × 2, 12 × 1 and a single lead printed as
//     consecutive rhythm rows. A separator tick must stand alone at both
//     ends (a blurred QRS stroke is not a tick), and shifts under 0.5 mm
//     are left to the pulses. Six-row pages without readable separators
//     are told apart by content: 3 × 4 + 3 prints II, V1 and V5 twice, so
//     its strips echo a grid cell (normalised cross-correlation of the
//     rows' baseline-nearest ink, "row echo"), 6 × 2 prints nothing twice;
//     on unusual row counts a strip is named by the cell it repeats. Rows
//     without separators whose column windows all keep one polarity are a
//     single lead printed as consecutive rows. Standard and Cabrera
//     limb-lead orders print alike; without labels the order with the
//     smaller Einthoven/Goldberger residual (ecg.CheckLimb) is kept.
//   - Trace following: per panel, the globally cheapest path through the
//     vertical ink runs of each image column, found by dynamic programming
//     over columns (Viterbi, IEEE Trans Inf Theory 1967;13:260–9; Forney,
//     Proc IEEE 1973;61:268–78). States are the runs of a column plus a few
//     gap states that carry the last position across columns without ink;
//     the transition cost is the vertical gap between consecutive runs
//     (touching runs cost nothing, so steep QRS strokes are free) and a weak
//     cost grows with distance from the row's baseline, so text, pen marks
//     and a neighbouring row's complexes that are not connected to the
//     trace are left alone. A thin run is represented by its ink-weighted
//     centre (sub-pixel); a tall run by its ends: its top when it rises
//     above both neighbours (R peak), its bottom when it falls below them
//     (S peak), both ends in order when the pen passed through it, so peaks
//     keep their amplitude. The centre line is bounded by the pen disk
//     swept over the neighbouring columns, with the pen's width taken from
//     the thinnest runs on the path (noise makes most runs taller) and
//     capped at 0.3 mm. On a noisy trace, where even the thinnest runs
//     are tall, the pen's width is read from the row's calibration pulse
//     instead, and that fine reading replaces the guarded one wherever no
//     other row's stroke meets the trace (follow_fine.go). A short stretch of tall runs that contains the
//     trace's line between thin runs and reaches 2 mm past it both ways
//     is another row's stroke crossing: it is passed at the trace's level.
//     A flat (thin) run past half-way to a neighbouring baseline costs 0.2
//     a column more, so a binarised row that lost its flats bridges its
//     breaks rather than run along the neighbour's unbroken line.
//   - Neighbouring rows (separateRows): where the paths of two adjacent
//     rows meet, each is followed again with the ink at and beyond the
//     other's path removed (printed traces keep their order almost
//     everywhere), and the pair of paths whose ink runs cover the most
//     pixels is kept (2 % more needed to change): a path that took the
//     neighbour's R wave leaves its own stroke unexplained. Rows less than
//     1 mV apart (12 × 1 at 20 mm/mV) are left alone: there complexes
//     cross whole rows and the order does not hold.
//   - Bands: a row's search band reaches 1.5 row pitches (at most 3 mV, the
//     page's edge for the outer rows); a path that stays past half-way to a
//     neighbouring baseline for longer than 0.25 s (longer than a QRS) is
//     on the neighbour's trace and is dropped there. Rows missing between
//     found rows (a gap of two or more pitches) are kept as placeholders so
//     the rows below keep their leads.
//   - Missing leads: a lead with less than 25 % of its printed window
//     traced is left out of the record; below 80 % it is kept and reported;
//     both come back as *LeadError under ecg.ErrPartial.
//   - Units: x → s and y → mV with grid.Calibration; each panel is resampled
//     on the grid t = k/fs. A lead printed twice (II in the grid and in the
//     rhythm strip) takes, per sample, the copy of higher quality; copies
//     that disagree by more than 0.1 mV RMS raise a warning.
//   - Self-check: panel quality = ink coverage of the path / (1 + mean jump
//     in mm), which chooses between copies; the Einthoven/Goldberger
//     residual flags limb leads far above the others. The quality a lead
//     reports (confidence.go) is that score times the share of the lead's
//     trace energy printed clear of other rows' strokes (paths within
//     0.5 mm of each other's run of ink, or a run leaving the search band,
//     count as meeting) times the share of its printed window returned;
//     Result.Crossed gives the met share, and leads with a tenth or more
//     are listed by CrossedLeads. On the eval's 21 overlap pages the
//     listed leads read a median of 8.3 dB and include 74 of the 78 leads
//     below 10 dB, the others 18.9 dB; the quality ranks leads by SNR with
//     Spearman ρ 0.61 (0.29 for the path's score alone, which stays at
//     0.99–1.00 on ink shared with other rows).
//   - Limb identities (limb_guide.go): limb leads printed at the same time
//     are projections of one frontal heart vector (Einthoven: III = II − I;
//     Goldberger: aVR = −(I+II)/2, aVL = I − II/2, aVF = II − I/2;
//     standards.md §1.3). Where one lead breaks them while the others
//     agree, its stretch is re-read at the value they predict, if the page
//     has ink there. With five or six simultaneous limb leads (6 × 2,
//     12 × 1) a departure of 1 mm of trace counts; with four (the second
//     column of a 3 × 4 page plus the rhythm strip's II: aVR + aVL + aVF =
//     0 and aVF = 1.5·II + aVR, two independent constraints, so one broken
//     lead is identified) only gross breaks, more than 0.3 mV for 20 ms (a
//     stroke taken from another row, never a sub-pixel slip on a steep
//     stroke).
//   - Clear limb leads (limb_clear.go): where two neighbouring rows trade
//     strokes, two limb leads break together (an aVR S wave and an aVL R
//     wave; their errors nearly cancel in aVR + aVL + aVF = 0) and the
//     algebra alone cannot say which. The page can: a lead whose stroke is
//     clear of every other row's ink, not bridged over a dropped
//     excursion and not within 20 ms of its panel's ends, was read from
//     its own ink. The frontal vector is fitted to the clear limb leads
//     (two at least; three or more must agree within 1 mm of trace; two
//     among five or six simultaneous leads only where no loose ink, a
//     stroke the path did not read, lies beside them) and the contested
//     leads departing from it by more than 2 mm are re-read at what it
//     predicts, where that lies on their own ink over 85 % of the stretch,
//     on pages whose clear limb leads agree at 98 % of the samples where
//     three or more are clear (records stored with per-lead gains break
//     the laws: LUDB's header gains, 90–96 %).
//     Overlap pages of records 1–9: median 14.5 → 15.1 dB, 45 leads up,
//     5 down by 1.4 dB at most.
//   - Withheld stretches (selfcheck.go): where a lead's path runs, past
//     half-way to another row's 0 mV line, on the ink that
//     row's path also runs on (within 0.5 mm), and the lead's other beats
//     do not show the same excursion (same sign, half its size, in at
//     least half of the panel's beats; a lead's own complexes repeat beat
//     to beat), the stretch is returned as NaN with a warning ("lead V2:
//     40 ms withheld where the strokes of row 3 (from the top) cross
//     it"); the lead stays
//     found. Stretches re-read by the limb identities are kept.
//   - SNR: the PhysioNet/CinC Challenge 2024 definition (see SNR).
//
// # Known limits
//
// Where tall complexes of several rows cross (20 mm/mV pages, 12 × 1 on
// A4) the strokes merge into one run per column and the path cannot tell
// whose stroke it follows; those leads lose QRS amplitude or, on six-row
// and 12 × 1 pages, swap strokes (the eval's overlap condition, n = 3,
// seed 1: 14.5 dB median, p10 2.7 dB, all leads found, no swap; by
// layout 12 × 1 3.4, 3x4+3 7.6, 6x2 11.8, 3x4+1 15.9, 3x4 18.2, Cabrera
// 18.5 dB; n = 9: 15.1 dB, 8 swapped leads on 63 overlap pages, on 12 × 1
// and 3x4+3 pages with three limb leads wrong together, and some
// precordial leads, which no identity ties; record 5 printed 12 × 1 at
// 10 mm/mV, whose V2–V4 complexes are taller than the row pitch, swaps
// V3). Where an R wave's apex lies in the X of another row's S-wave
// strokes crossing it at a small angle, no per-column choice can see
// where it turns; apexesInBlocks reads it where the arms' centre lines
// meet, which needs straight arms standing apart outside the block and
// ink with grey levels (fax pages read worse with it). Small leads on the overlap pages are bounded by the record's own
// noise, finer than the pen (record 1's III, 12 dB at best; record 2's
// aVF, 13 dB). Such leads are listed by CrossedLeads
// (confidence.go). Most of
// the lost height is at apexes beyond the row's search band (two or three
// row pitches away on 12 × 1 pages: a wider band was measured worse
// overall, as the row then takes its neighbours' strokes); on 3x4+3 and
// 12 × 1 pages three or more of the simultaneous limb leads are broken
// at once, so neither the limb identities nor the beat-to-beat test of
// the withheld stretches can single them out. On synthetic pages the
// tallest complexes of the top row can run off the sheet, where the
// front end's paper mask drops them. A row missing at the top or bottom
// of the page is not detected as missing, except on a stack of 20 mm/mV
// pulses, whose ladder gives every row (stackRows, ladderRows). Real
// records printed without pulses lose rows whose baseline wanders
// (LUDB, 3 × 4, 6 × 2 and 12 × 1 at 10 mm/mV, pulses painted out: 12 of
// 87 pages read with the wrong rows), and the two pages of record 35,
// whose T waves are small, stay upside down where the front end turned
// them.
// Pages turned by a quarter turn are not traced (the front end turns them
// upright). Detail finer than the pen width (high-frequency noise) is not
// recoverable.
//
// # Layout descriptions
//
// Besides the standard names ("3x4", "3x4+1", "3x4+3", "6x2", "12x1",
// "cabrera-3x4", "rhythm"), ParseLayout reads a description of fields
// separated by ";":
//
//	sec=2.5              seconds per column (default 2.5)
//	rows=4               optional check of the number of rows
//	cols=4               optional number of columns (width of "*" cells)
//	cells=ROW/ROW/...    rows top to bottom; cells left to right, comma-separated
//
// A cell is a lead name (I, II, III, aVR, aVL, aVF, V1…V6, …) printed for
// one column, consecutive columns following in time (a 3 × 4 row covers
// 0–2.5, 2.5–5, 5–7.5, 7.5–10 s). Prefix "-" marks an inverted lead (−aVR);
// suffix "*" makes the cell span the whole row (a rhythm strip, cols ×
// sec); suffix "~" continues the lead in time from where its previous cell
// ended (a long rhythm printed over several rows). A description may hold
// at most 144 cells and 600 s of record (more than a page can print);
// Extract also refuses output rates above 10 kHz. Examples:
//
//	sec=2.5;cells=I,aVR,V1,V4/II,aVL,V2,V5/III,aVF,V3,V6/II*
//	sec=5;cells=I,V1/II,V2/III,V3/aVR,V4/aVL,V5/aVF,V6
//	sec=10;cells=II/II~/II~         (30 s of lead II over three rows)
package trace
