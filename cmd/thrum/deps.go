package main
import (
 _ "github.com/go-audio/wav"
 _ "gonum.org/v1/gonum/dsp/fourier"
 _ "github.com/BurntSushi/toml"
 _ "github.com/spf13/cobra"
 _ "github.com/schollz/progressbar/v3"
 _ "golang.org/x/term"
 _ "gonum.org/v1/plot"
)
func main(){}
