package job

import (
	"bufio"
	"encoding/gob"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"os"
)

// PieceFormat and PieceVersion identify a piece file: one line of JSON that names the format,
// the kind of piece and the version, then the piece in Go's gob encoding, which keeps every
// float64 bit for bit. A reader refuses other formats, kinds and versions, as the model file
// does: a piece is an intermediate of one run, to be read by the same release that wrote it.
const (
	PieceFormat  = "cohortmix piece"
	PieceVersion = 2 // 2: signatures with their windows per state, the fit with its ensemble and reproducibility
)

// The kinds of piece.
const (
	KindCensus = "census"
	KindPlan   = "plan"
	KindSample = "sample"
	KindFit    = "fit"
	KindAssign = "assignment"
)

type pieceHeader struct {
	Format  string `json:"format"`
	Kind    string `json:"kind"`
	Version int    `json:"version"`
}

// WritePiece writes a piece of the given kind.
func WritePiece(w io.Writer, kind string, v any) error {
	bw := bufio.NewWriter(w)
	head, err := json.Marshal(pieceHeader{PieceFormat, kind, PieceVersion})
	if err != nil {
		return err
	}
	bw.Write(append(head, '\n'))
	if err := gob.NewEncoder(bw).Encode(v); err != nil {
		return fmt.Errorf("job: writing a %s piece: %w", kind, err)
	}
	return bw.Flush()
}

// ReadPiece reads a piece of the given kind from a file into v.
func ReadPiece(path, kind string, v any) error {
	f, err := os.Open(path)
	if err != nil {
		return fmt.Errorf("%s: cannot open: %w", path, errors.Join(ErrPiece, err))
	}
	defer f.Close()
	br := bufio.NewReader(f)
	line, err := br.ReadSlice('\n')
	var h pieceHeader
	if err != nil || json.Unmarshal(line, &h) != nil || h.Format != PieceFormat {
		return fmt.Errorf("%s: not a piece of a split run: %w; name the files the shard passes wrote", path, ErrPiece)
	}
	if h.Kind != kind {
		return fmt.Errorf("%s: a %s piece where a %s piece is needed: %w", path, h.Kind, kind, ErrPiece)
	}
	if h.Version != PieceVersion {
		return fmt.Errorf("%s: a piece of version %d, and this cohortmix reads version %d: %w; run every pass of a split run with the same release", path, h.Version, PieceVersion, ErrPiece)
	}
	if err := gob.NewDecoder(br).Decode(v); err != nil {
		return fmt.Errorf("%s: the %s piece is damaged (%v): %w; write it again", path, kind, err, ErrPiece)
	}
	return nil
}

// ReadPieces reads pieces of one kind from files.
func ReadPieces[T any](paths []string, kind string) ([]*T, error) {
	out := make([]*T, len(paths))
	for i, p := range paths {
		out[i] = new(T)
		if err := ReadPiece(p, kind, out[i]); err != nil {
			return nil, err
		}
	}
	return out, nil
}
