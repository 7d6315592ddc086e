package report

import (
	"crypto/sha256"
	"encoding/hex"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"time"
)

// Record is the lab record of a run: what was analysed, with which
// command, by which version, when. Every field is optional.
type Record struct {
	// Input is the digest of the input.
	Input *Digest
	// CommandLine is the command as typed, program name first, and WorkDir
	// the folder it ran in.
	CommandLine []string
	WorkDir     string
	// AnalysedAt is when the run began.
	AnalysedAt time.Time
}

// Digest identifies an input: its size and SHA-256 (FIPS 180-4).
type Digest struct {
	// Bytes is the size of the file, or of all its frame files.
	Bytes int64
	// SHA256 is the hex SHA-256 of a video file; of a folder or glob of
	// still frames, the SHA-256 of the list of the frame files' digests, one
	// line "<hex digest>  <file name>" each in byte order of the names, as
	// "sha256sum" prints them (LC_ALL=C sha256sum *.png | sha256sum gives
	// the same in the frames' folder).
	SHA256 string
	// Files is the number of files digested (1 for a video).
	Files int
}

// stillExts are the still-image files of a frame folder, as the frame
// reader takes them.
var stillExts = []string{".png", ".tif", ".tiff"}

func isStill(name string) bool {
	return slices.Contains(stillExts, strings.ToLower(filepath.Ext(name)))
}

// DigestInput reads the input once and returns its digest: a video file,
// a folder of still frames, or a glob of them (a path that does not exist
// as written and holds *, ? or [).
func DigestInput(path string) (*Digest, error) {
	st, err := os.Stat(path)
	switch {
	case err != nil && strings.ContainsAny(path, "*?["):
		names, gerr := filepath.Glob(path)
		if gerr != nil {
			return nil, fmt.Errorf("input digest: bad pattern %q: %v", path, gerr)
		}
		return digestFiles(names)
	case err != nil:
		return nil, fmt.Errorf("input digest: %w", err)
	case st.IsDir():
		ents, err := os.ReadDir(path)
		if err != nil {
			return nil, fmt.Errorf("input digest: %w", err)
		}
		var names []string
		for _, e := range ents {
			if !e.IsDir() {
				names = append(names, filepath.Join(path, e.Name()))
			}
		}
		return digestFiles(names)
	}
	h, n, err := digestFile(path)
	if err != nil {
		return nil, err
	}
	return &Digest{Bytes: n, SHA256: hex.EncodeToString(h), Files: 1}, nil
}

// digestFiles digests the still frames among names.
func digestFiles(names []string) (*Digest, error) {
	var stills []string
	for _, n := range names {
		if isStill(n) {
			stills = append(stills, n)
		}
	}
	if len(stills) == 0 {
		return nil, fmt.Errorf("input digest: no .png, .tif or .tiff files")
	}
	slices.SortFunc(stills, func(a, b string) int { return strings.Compare(filepath.Base(a), filepath.Base(b)) })
	list := sha256.New()
	d := &Digest{Files: len(stills)}
	for _, n := range stills {
		h, size, err := digestFile(n)
		if err != nil {
			return nil, err
		}
		d.Bytes += size
		fmt.Fprintf(list, "%s  %s\n", hex.EncodeToString(h), filepath.Base(n))
	}
	d.SHA256 = hex.EncodeToString(list.Sum(nil))
	return d, nil
}

// digestFile returns the SHA-256 and size of one file.
func digestFile(path string) ([]byte, int64, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, 0, fmt.Errorf("input digest: %w", err)
	}
	defer f.Close()
	h := sha256.New()
	n, err := io.Copy(h, f)
	if err != nil {
		return nil, 0, fmt.Errorf("input digest: %s: %w", path, err)
	}
	return h.Sum(nil), n, nil
}

// shellQuote writes an argument so that a POSIX shell reads it back as one
// word: as it is when it holds only safe characters, else in single
// quotes.
func shellQuote(s string) string {
	if s != "" && strings.Trim(s, "abcdefghijklmnopqrstuvwxyzABCDEFGHIJKLMNOPQRSTUVWXYZ0123456789-_./:=,+@%") == "" {
		return s
	}
	return "'" + strings.ReplaceAll(s, "'", `'\''`) + "'"
}

// commandLine prints args as a shell command.
func commandLine(args []string) string {
	q := make([]string, len(args))
	for i, a := range args {
		q[i] = shellQuote(a)
	}
	return strings.Join(q, " ")
}

// byteSize prints a size in bytes with its binary multiple.
func byteSize(n int64) string {
	units := []string{"KiB", "MiB", "GiB", "TiB"}
	if n < 1024 {
		return fmt.Sprintf("%d bytes", n)
	}
	v, u := float64(n)/1024, 0
	for v >= 1024 && u < len(units)-1 {
		v, u = v/1024, u+1
	}
	return fmt.Sprintf("%d bytes (%s %s)", n, formatValue(v, ""), units[u])
}
