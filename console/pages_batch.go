package console

import (
	"bytes"
	"context"
	"errors"
	"fmt"
	"io"
	"net/http"
	"net/url"
	"path/filepath"
	"strings"

	"github.com/halovet/halovet/validate"
)

func bytesReader(b []byte) io.Reader { return bytes.NewReader(b) }

type batchFormData struct {
	Batches  []batchSnapshot
	MaxBytes string
}

func (c *Console) batchForm(w http.ResponseWriter, r *http.Request, rq *request) {
	c.render(w, r, rq.s, http.StatusOK, "batches", "Shipment batches",
		batchFormData{Batches: c.batches.list(rq.id().CredentialID), MaxBytes: figure(float64(c.cfg.MaxUploadBytes))})
}

// batchUpload takes the file and starts checking it; the browser is sent to the batch's
// page, which shows the progress until the verdicts are in.
func (c *Console) batchUpload(w http.ResponseWriter, r *http.Request, rq *request) {
	if c.batches.running(rq.id().CredentialID) >= maxRunningOwn {
		c.fail(w, r, rq.s, http.StatusTooManyRequests, "Batches still running",
			fmt.Sprintf("You have %d batches being checked; wait for one to finish, then upload again. Nothing was checked.", maxRunningOwn))
		return
	}
	f, hdr, err := r.FormFile("file")
	if err != nil {
		c.fail(w, r, rq.s, http.StatusBadRequest, "No file", "file: choose a CSV or JSON Lines file of shipment records to upload. Nothing was checked.")
		return
	}
	defer f.Close()
	data, err := io.ReadAll(io.LimitReader(f, c.cfg.MaxUploadBytes+1))
	if err != nil {
		c.fail(w, r, rq.s, http.StatusBadRequest, "The file could not be read", err.Error())
		return
	}
	if int64(len(data)) > c.cfg.MaxUploadBytes {
		c.fail(w, r, rq.s, http.StatusRequestEntityTooLarge, "File too large",
			fmt.Sprintf("file: %s is larger than %s bytes; split it, or check it with 'halovet check'. Nothing was checked.", hdr.Filename, figure(float64(c.cfg.MaxUploadBytes))))
		return
	}
	format := validate.FormatOfPath(hdr.Filename)
	if choice := r.PostFormValue("format"); choice != "" && choice != "auto" {
		if format, err = validate.ParseFormat(choice); err != nil {
			c.fail(w, r, rq.s, http.StatusBadRequest, "Format not accepted", "format: "+err.Error())
			return
		}
	}
	if format == validate.FormatUnknown {
		c.fail(w, r, rq.s, http.StatusBadRequest, "Format unknown",
			fmt.Sprintf("file: %q does not end in .csv, .jsonl or .ndjson; choose the format in the form. Nothing was checked.", hdr.Filename))
		return
	}
	b := &batch{Owner: rq.id().CredentialID, Kind: batchCheck, FileName: filepath.Base(hdr.Filename), Format: format, data: data}
	c.start(r, rq, b, rpcCheckBatch)
	http.Redirect(w, r, "/console/batches/"+url.PathEscape(b.ID), http.StatusSeeOther)
}

// start registers a batch and runs it apart from the request (which ends at once).
func (c *Console) start(r *http.Request, rq *request, b *batch, rpc string) {
	c.batches.add(b)
	ctx := context.WithoutCancel(c.ctx(r, rq, rpc))
	go c.run(ctx, b)
}

type batchPageData struct {
	B           batchSnapshot
	Rows        []batchRow
	Shown       int
	Outcome     string
	Code        string
	Codes       []string
	Outcomes    []string
	CanRecord   bool
	RecordedFor string // the check this recording was made from
	CanOpen     bool   // the role may open a recorded shipment (GetShipment)
}

const maxRowsShown = 2000

func (c *Console) batchPage(w http.ResponseWriter, r *http.Request, rq *request) {
	b := c.batches.get(r.PathValue("id"), rq.id().CredentialID)
	if b == nil {
		c.fail(w, r, rq.s, http.StatusNotFound, "No such batch", "This batch is not among yours (batches are kept while the console runs, the most recent "+fmt.Sprint(maxBatchesKept)+").")
		return
	}
	s := b.snapshot()
	q := r.URL.Query()
	d := batchPageData{B: s, CanOpen: c.allowed(rq, rpcGetShipment), Outcome: q.Get("outcome"), Code: q.Get("code"),
		Outcomes:  []string{"accepted", "accepted-with-warnings", "rejected"},
		CanRecord: s.Kind == batchCheck && s.Done && s.Err == nil && s.RecordedAs == "" && c.allowed(rq, rpcRecordBatch)}
	if s.Done {
		d.Codes = codesOf(s.Rows)
		for _, row := range s.Rows {
			if d.Outcome != "" && row.V.Outcome.String() != d.Outcome {
				continue
			}
			if d.Code != "" && !hasCode(row.V, d.Code) {
				continue
			}
			d.Shown++
			if len(d.Rows) < maxRowsShown {
				d.Rows = append(d.Rows, row)
			}
		}
	}
	title := "Batch " + s.FileName
	c.render(w, r, rq.s, http.StatusOK, "batch", title, d, func(v *view) {
		if !s.Done {
			v.Refresh = 1 // the page reloads itself (no script) until the verdicts are in
		}
		if s.Summary != nil {
			for _, cn := range s.Summary.Cautions() {
				v.Cautions = append(v.Cautions, cn.Text+" ("+strings.Join(cn.Designations, ", ")+")")
			}
		}
	})
}

func hasCode(v validate.Verdict, code string) bool {
	for _, f := range v.Findings {
		if f.Code == code {
			return true
		}
	}
	return false
}

// batchReport downloads the verdicts as the CSV report of 'halovet check --report'.
func (c *Console) batchReport(w http.ResponseWriter, r *http.Request, rq *request) {
	b := c.batches.get(r.PathValue("id"), rq.id().CredentialID)
	if b == nil {
		c.fail(w, r, rq.s, http.StatusNotFound, "No such batch", "This batch is not among yours.")
		return
	}
	s := b.snapshot()
	if !s.Done || s.Err != nil {
		c.fail(w, r, rq.s, http.StatusConflict, "No report yet", "The batch has not finished (or failed); its report exists once every line is answered.")
		return
	}
	var out bytes.Buffer
	rep, err := validate.NewCSVReport(&out)
	if err == nil {
		for i := range s.Rows {
			if err = rep.Write(&s.Rows[i].V); err != nil {
				break
			}
		}
		if err == nil {
			err = rep.Close()
		}
	}
	if err != nil {
		c.fail(w, r, rq.s, http.StatusInternalServerError, "The report could not be written", err.Error())
		return
	}
	name := strings.TrimSuffix(s.FileName, filepath.Ext(s.FileName)) + "-verdicts.csv"
	w.Header().Set("Content-Type", "text/csv; charset=utf-8")
	w.Header().Set("Content-Disposition", fmt.Sprintf("attachment; filename=%q", name))
	_, _ = w.Write(out.Bytes())
}

// batchRecord records a checked batch: the same file goes through RecordShipments, which
// judges it again against the register as it is now, stores the accepted records and
// draws their quotas.
func (c *Console) batchRecord(w http.ResponseWriter, r *http.Request, rq *request) {
	src := c.batches.get(r.PathValue("id"), rq.id().CredentialID)
	if src == nil {
		c.fail(w, r, rq.s, http.StatusNotFound, "No such batch", "This batch is not among yours. Nothing was recorded.")
		return
	}
	s := src.snapshot()
	if err := recordable(s); err != nil {
		c.fail(w, r, rq.s, http.StatusConflict, "Not recorded", err.Error()+" Nothing was recorded.")
		return
	}
	b := &batch{Owner: src.Owner, Kind: batchRecord, FileName: src.FileName, Format: src.Format, data: src.data}
	src.mu.Lock()
	if src.RecordedAs != "" {
		src.mu.Unlock()
		c.fail(w, r, rq.s, http.StatusConflict, "Not recorded", "This batch was recorded already. Nothing was recorded again.")
		return
	}
	c.batches.add(b)
	src.RecordedAs = b.ID
	src.mu.Unlock()
	go c.run(context.WithoutCancel(c.ctx(r, rq, rpcRecordBatch)), b)
	http.Redirect(w, r, "/console/batches/"+url.PathEscape(b.ID), http.StatusSeeOther)
}

func recordable(s batchSnapshot) error {
	switch {
	case s.Kind != batchCheck:
		return errors.New("this is a recording already")
	case !s.Done:
		return errors.New("the check has not finished")
	case s.Err != nil:
		return errors.New("the check failed")
	}
	return nil
}
