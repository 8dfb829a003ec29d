package accuracy

import (
	"fmt"
	"io"
	"math"
	"sort"
	"strings"
	"text/tabwriter"
)

// Page is the score of one digitised page against its truth. Signed errors
// are measured minus true; NaN where a value was not measured.
type Page struct {
	Name      string `json:"name"`
	Condition string `json:"condition"`
	Layout    string `json:"layout"`
	Seed      uint64 `json:"seed"`
	// Class is the error class when digitising failed ("unreadable",
	// "no-ecg", "internal"), "partial" for a partial result, else "".
	Class string `json:"class,omitempty"`
	Error string `json:"error,omitempty"`
	// SNRdB and StrictSNRdB give each printed lead's SNR in dB (aligned
	// and strict Challenge 2024 variants); a lead not returned scores 0.
	SNRdB       map[string]F `json:"snr_db"`
	StrictSNRdB map[string]F `json:"strict_snr_db"`
	ShiftMS     F            `json:"shift_ms"` // the page's best time shift for the aligned SNR
	// Quality is the digitiser's own 0–1 score of each printed lead it
	// returned (trace.Result.Quality), to compare with the lead's SNR.
	Quality      map[string]F `json:"quality,omitempty"`
	LeadsPrinted int          `json:"leads_printed"`
	LeadsFound   int          `json:"leads_found"`
	Swaps        int          `json:"lead_swaps"` // returned leads that match another printed lead better than their own
	// PxPerMMXErrPct, PxPerMMYErrPct are the calibration's errors, %,
	// against the true px/mm of the upright page through the page's and
	// the truth's full mappings (grid.Evaluate); NaN when the page came
	// out in the wrong orientation.
	PxPerMMXErrPct F    `json:"px_per_mm_x_err_pct"`
	PxPerMMYErrPct F    `json:"px_per_mm_y_err_pct"`
	GainCorrect    bool `json:"gain_correct"`    // within 2 % of the truth
	GainFromPulse  bool `json:"gain_from_pulse"` // read from the calibration pulses (not assumed)
	SpeedCorrect   bool `json:"speed_correct"`   // within 2 % of the truth
	SkewErrDeg     F    `json:"skew_err_deg"`    // skew left on the upright page, degrees (absolute)
	ResidualMM     F    `json:"residual_mm"`     // largest distortion left over the grid area, mm (grid.Score.ResidualMM)
	HRErrBPM       F    `json:"hr_err_bpm"`
	PRErrMS        F    `json:"pr_err_ms"`
	QRSErrMS       F    `json:"qrs_err_ms"`
	QTErrMS        F    `json:"qt_err_ms"`
	Seconds        F    `json:"seconds"` // digitising time
}

// Row summarises the pages of one condition.
type Row struct {
	Condition      string `json:"condition"`
	Pages          int    `json:"pages"`
	Failed         int    `json:"failed"`
	SNRMedianDB    F      `json:"snr_median_db"`
	SNRP10DB       F      `json:"snr_p10_db"`
	StrictMedianDB F      `json:"strict_snr_median_db"`
	StrictMeanDB   F      `json:"strict_snr_mean_db"`
	LeadsFoundPct  F      `json:"leads_found_pct"`
	Swaps          int    `json:"lead_swaps"`
	PxXErrPct      F      `json:"px_per_mm_x_err_pct_median"`
	PxYErrPct      F      `json:"px_per_mm_y_err_pct_median"`
	GainCorrectPct F      `json:"gain_correct_pct"`
	GainPulsePct   F      `json:"gain_from_pulse_pct"`
	SkewErrDeg     F      `json:"skew_err_deg_median"`
	HRErrBPM       F      `json:"hr_abs_err_bpm_median"`
	PRErrMS        F      `json:"pr_abs_err_ms_median"`
	QRSErrMS       F      `json:"qrs_abs_err_ms_median"`
	QTErrMS        F      `json:"qt_abs_err_ms_median"`
	SecondsPerPage F      `json:"seconds_per_page"`
}

// Summarize groups pages by key (for example the condition) in first-seen
// order and appends an "all" row over every page when there is more than
// one group. Per-lead SNR statistics pool every (page, printed lead) pair;
// error statistics are medians of absolute errors over the pages where
// the value was measured.
func Summarize(pages []Page, key func(Page) string) []Row {
	var order []string
	groups := make(map[string][]Page)
	for _, p := range pages {
		k := key(p)
		if _, ok := groups[k]; !ok {
			order = append(order, k)
		}
		groups[k] = append(groups[k], p)
	}
	var rows []Row
	for _, k := range order {
		rows = append(rows, summarize(k, groups[k]))
	}
	if len(order) > 1 {
		rows = append(rows, summarize("all", pages))
	}
	return rows
}

func summarize(name string, pages []Page) Row {
	r := Row{Condition: name, Pages: len(pages)}
	var snr, strict, pxX, pxY, skew, hr, pr, qrs, qt, secs []float64
	printed, found, gainOK, gainPulse := 0, 0, 0, 0
	for _, p := range pages {
		if p.Class != "" && p.Class != "partial" {
			r.Failed++
		}
		for _, l := range sortedKeys(p.SNRdB) {
			snr = append(snr, float64(p.SNRdB[l]))
		}
		for _, l := range sortedKeys(p.StrictSNRdB) {
			strict = append(strict, float64(p.StrictSNRdB[l]))
		}
		printed += p.LeadsPrinted
		found += p.LeadsFound
		r.Swaps += p.Swaps
		if p.GainCorrect {
			gainOK++
		}
		if p.GainFromPulse {
			gainPulse++
		}
		pxX = append(pxX, float64(p.PxPerMMXErrPct))
		pxY = append(pxY, float64(p.PxPerMMYErrPct))
		skew = append(skew, float64(p.SkewErrDeg))
		hr = append(hr, float64(p.HRErrBPM))
		pr = append(pr, float64(p.PRErrMS))
		qrs = append(qrs, float64(p.QRSErrMS))
		qt = append(qt, float64(p.QTErrMS))
		secs = append(secs, float64(p.Seconds))
	}
	r.SNRMedianDB = F(Median(snr))
	r.SNRP10DB = F(Percentile(snr, 10))
	r.StrictMedianDB = F(Median(strict))
	r.StrictMeanDB = F(Mean(strict))
	r.LeadsFoundPct = F(math.NaN())
	if printed > 0 {
		r.LeadsFoundPct = F(100 * float64(found) / float64(printed))
	}
	r.GainCorrectPct, r.GainPulsePct = F(math.NaN()), F(math.NaN())
	if len(pages) > 0 {
		r.GainCorrectPct = F(100 * float64(gainOK) / float64(len(pages)))
		r.GainPulsePct = F(100 * float64(gainPulse) / float64(len(pages)))
	}
	r.PxXErrPct, r.PxYErrPct, r.SkewErrDeg = F(MedianAbs(pxX)), F(MedianAbs(pxY)), F(MedianAbs(skew))
	r.HRErrBPM, r.PRErrMS, r.QRSErrMS, r.QTErrMS = F(MedianAbs(hr)), F(MedianAbs(pr)), F(MedianAbs(qrs)), F(MedianAbs(qt))
	r.SecondsPerPage = F(Mean(secs))
	return r
}

func sortedKeys(m map[string]F) []string {
	k := make([]string, 0, len(m))
	for s := range m {
		k = append(k, s)
	}
	sort.Strings(k)
	return k
}

// WriteTable prints rows as an aligned text table; key names the first
// column (what the rows are grouped by, e.g. "condition" or "layout").
func WriteTable(w io.Writer, key string, rows []Row) error {
	tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', tabwriter.AlignRight)
	fmt.Fprintln(tw, key+"\tpages\tfailed\tSNR med dB\tSNR p10 dB\tstrict med dB\tleads %\tswaps\tpx/mm x %\tpx/mm y %\tgain ok %\tpulse %\tskew °\tHR bpm\tPR ms\tQRS ms\tQT ms\ts/page\t")
	for _, r := range rows {
		fmt.Fprintf(tw, "%s\t%d\t%d\t%s\t%s\t%s\t%s\t%d\t%s\t%s\t%s\t%s\t%s\t%s\t%s\t%s\t%s\t%s\t\n",
			r.Condition, r.Pages, r.Failed, f1(r.SNRMedianDB), f1(r.SNRP10DB), f1(r.StrictMedianDB),
			f0(r.LeadsFoundPct), r.Swaps, f2(r.PxXErrPct), f2(r.PxYErrPct), f0(r.GainCorrectPct), f0(r.GainPulsePct),
			f2(r.SkewErrDeg), f1(r.HRErrBPM), f0(r.PRErrMS), f0(r.QRSErrMS), f0(r.QTErrMS), f2(r.SecondsPerPage))
	}
	return tw.Flush()
}

// Legend explains the table columns.
const Legend = `SNR: per printed lead, pooled over pages (aligned: one shift per page within ±60 ms, lead mean removed;
strict: Challenge 2024, no shift, no mean removal); a lead not returned scores 0 dB. Swaps: returned leads that
match another lead better than their own. Calibration, skew and interval columns are medians of absolute errors
against the truth; px/mm and skew are those of the upright page, through the page's and the truth's full mappings
(a photo's registration and lens included); gain ok: within 2 % (the assumed 10 mm/mV counts when it is right);
pulse: gain read from the calibration pulses.`

// WriteMarkdown prints rows as a Markdown table (for the README); key
// names the first column.
func WriteMarkdown(w io.Writer, key string, rows []Row) error {
	var b strings.Builder
	b.WriteString("| " + key + " | pages | failed | SNR median dB | SNR p10 dB | strict SNR median dB | leads found % | swaps | px/mm x err % | px/mm y err % | gain ok % | gain from pulse % | skew err ° | HR err bpm | PR err ms | QRS err ms | QT err ms | s/page |\n")
	b.WriteString("|---|--:|--:|--:|--:|--:|--:|--:|--:|--:|--:|--:|--:|--:|--:|--:|--:|--:|\n")
	for _, r := range rows {
		fmt.Fprintf(&b, "| %s | %d | %d | %s | %s | %s | %s | %d | %s | %s | %s | %s | %s | %s | %s | %s | %s | %s |\n",
			r.Condition, r.Pages, r.Failed, f1(r.SNRMedianDB), f1(r.SNRP10DB), f1(r.StrictMedianDB),
			f0(r.LeadsFoundPct), r.Swaps, f2(r.PxXErrPct), f2(r.PxYErrPct), f0(r.GainCorrectPct), f0(r.GainPulsePct),
			f2(r.SkewErrDeg), f1(r.HRErrBPM), f0(r.PRErrMS), f0(r.QRSErrMS), f0(r.QTErrMS), f2(r.SecondsPerPage))
	}
	_, err := io.WriteString(w, b.String())
	return err
}

func ff(v F, prec int) string {
	x := float64(v)
	if math.IsNaN(x) || math.IsInf(x, 0) {
		return "–"
	}
	return fmt.Sprintf("%.*f", prec, x)
}

func f0(v F) string { return ff(v, 0) }
func f1(v F) string { return ff(v, 1) }
func f2(v F) string { return ff(v, 2) }
