package job

import (
	"bufio"
	"bytes"
	"crypto/sha256"
	"encoding/gob"
	"encoding/hex"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"os"
	"slices"

	"github.com/cohortmix/cohortmix/cohort"
)

// PieceFormat and PieceVersion identify a piece file: one line of JSON that names the format,
// the kind of piece, the version and where the piece comes from (PieceID), then the piece in
// Go's gob encoding, which keeps every float64 bit for bit. A reader refuses other formats,
// kinds and versions, as the model file does: a piece is an intermediate of one run, to be read
// by the same release that wrote it; and it refuses a body whose SHA-256 is not the header's.
const (
	PieceFormat  = "cohortmix piece"
	PieceVersion = 7 // 3: the run's identity and the body's checksum in the header; 4: time of day, wear days, time zone; 5: typed quality notes; 6: every note typed; 7: each state's windows counted by a feature of a known scale
)

// The kinds of piece.
const (
	KindCensus = "census"
	KindPlan   = "plan"
	KindSample = "sample"
	KindFit    = "fit"
	KindAssign = "assignment"
)

// PieceID says where a piece comes from. Run names the run: a SHA-256 of the settings and of
// the input files' names and contents, the same in every shard (RunOf). From is the checksum
// of the piece it was made from (a sample's plan, an assignment's fit), so that pieces of two
// runs, or of two fits of one run, are never mixed. Sum is the SHA-256 of the piece's body,
// filled in by WritePiece.
type PieceID struct {
	Run   string `json:"run"`
	Shard string `json:"shard,omitempty"`
	From  string `json:"from,omitempty"`
	Sum   string `json:"sha256"`
}

type pieceHeader struct {
	Format  string `json:"format"`
	Kind    string `json:"kind"`
	Version int    `json:"version"`
	PieceID
}

// RunOf is the identity of a run: a SHA-256 of its settings (without the shard, the workers
// and the temporary folder, which do not change the result) and of its input files' names and
// contents.
func RunOf(o Options, files []cohort.FileInfo) string {
	o.Read.Shard = cohort.Shard{}
	h := sha256.New()
	fmt.Fprintf(h, "%+v\n", o.typed())
	for _, f := range files {
		fmt.Fprintf(h, "%q %s %d\n", f.Path, f.SHA256, f.Bytes)
	}
	return hex.EncodeToString(h.Sum(nil))
}

// WritePiece writes a piece of the given kind; id says where it comes from, and its Sum is
// computed here.
func WritePiece(w io.Writer, kind string, id PieceID, v any) error {
	b, _, err := EncodePiece(kind, id, v)
	if err != nil {
		return err
	}
	_, err = w.Write(b)
	return err
}

// EncodePiece is the piece WritePiece writes, whole, and its id with the Sum set: for a step
// that writes pieces made from this one (PieceID.From) in the same go.
func EncodePiece(kind string, id PieceID, v any) ([]byte, PieceID, error) {
	var body bytes.Buffer
	if err := gob.NewEncoder(&body).Encode(v); err != nil {
		return nil, id, fmt.Errorf("writing a %s piece: %w", kind, err)
	}
	sum := sha256.Sum256(body.Bytes())
	id.Sum = hex.EncodeToString(sum[:])
	head, err := json.Marshal(pieceHeader{PieceFormat, kind, PieceVersion, id})
	if err != nil {
		return nil, id, err
	}
	return slices.Concat(head, []byte{'\n'}, body.Bytes()), id, nil
}

// maxPieceBytes bounds a piece file read whole: far above any run's pieces (an assignment
// piece of 10⁵ participants is some tens of MB).
const maxPieceBytes = 4 << 30

// ReadPiece reads a piece of the given kind from a file into v, and tells where it comes from.
func ReadPiece(path, kind string, v any) (PieceID, error) {
	f, err := os.Open(path)
	if err != nil {
		return PieceID{}, fmt.Errorf("%s: cannot open: %w", path, errors.Join(ErrPiece, err))
	}
	defer f.Close()
	br := bufio.NewReader(f)
	line, err := br.ReadSlice('\n')
	var h pieceHeader
	if err != nil || json.Unmarshal(line, &h) != nil || h.Format != PieceFormat {
		return PieceID{}, fmt.Errorf("%s: not a piece of a split run: %w; name the files the shard passes wrote", path, ErrPiece)
	}
	if h.Kind != kind {
		return PieceID{}, fmt.Errorf("%s: a %s piece where a %s piece is needed: %w", path, h.Kind, kind, ErrPiece)
	}
	if h.Version != PieceVersion {
		return PieceID{}, fmt.Errorf("%s: a piece of version %d, and this cohortmix reads version %d: %w; run every pass of a split run with the same release", path, h.Version, PieceVersion, ErrPiece)
	}
	body, err := io.ReadAll(io.LimitReader(br, maxPieceBytes))
	if err != nil {
		return PieceID{}, fmt.Errorf("%s: cannot read: %w", path, errors.Join(ErrPiece, err))
	}
	if sum := sha256.Sum256(body); hex.EncodeToString(sum[:]) != h.Sum {
		return PieceID{}, fmt.Errorf("%s: the %s piece is damaged (its content does not match its checksum): %w; write it again", path, kind, ErrPiece)
	}
	r := bytes.NewReader(body)
	if err := gob.NewDecoder(r).Decode(v); err != nil || r.Len() > 0 {
		if err == nil {
			err = errors.New("bytes after the piece")
		}
		return PieceID{}, fmt.Errorf("%s: the %s piece is damaged (%v): %w; write it again", path, kind, err, ErrPiece)
	}
	return h.PieceID, nil
}

// ReadPieces reads pieces of one kind from files.
func ReadPieces[T any](paths []string, kind string) ([]*T, []PieceID, error) {
	out := make([]*T, len(paths))
	ids := make([]PieceID, len(paths))
	for i, p := range paths {
		out[i] = new(T)
		var err error
		if ids[i], err = ReadPiece(p, kind, out[i]); err != nil {
			return nil, nil, err
		}
	}
	return out, ids, nil
}

// MadeFrom checks that every piece of paths (of the given kind, with ids) was made from the
// piece at parentPath (parent), in the same run; a piece of another run, or of another fit or
// plan of this one, is refused, named.
func MadeFrom(parentPath string, parent PieceID, kind string, paths []string, ids []PieceID) error {
	for i, id := range ids {
		switch {
		case id.Run != parent.Run:
			return fmt.Errorf("%s: this %s piece is of another run than %s (other inputs or settings): %w; give the pieces this run's passes wrote", paths[i], kind, parentPath, ErrPiece)
		case id.From != parent.Sum:
			return fmt.Errorf("%s: this %s piece was made from another piece than %s: %w; give the pieces made from it, or run the later passes again", paths[i], kind, parentPath, ErrPiece)
		}
	}
	return nil
}
