package main
import (
 _ "github.com/spf13/cobra"
 _ "github.com/stretchr/testify/require"
 _ "github.com/disintegration/imaging"
 _ "gonum.org/v1/gonum/mat"
 _ "golang.org/x/image/tiff"
 _ "golang.org/x/image/webp"
 _ "golang.org/x/image/bmp"
 _ "golang.org/x/image/font/gofont/goregular"
 _ "golang.org/x/image/font/opentype"
 _ "github.com/go-pdf/fpdf"
 _ "github.com/pdfcpu/pdfcpu/pkg/api"
 _ "modernc.org/sqlite"
 _ "golang.org/x/term"
)
func main(){}
