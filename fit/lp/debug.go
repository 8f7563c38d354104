package lp
import "os"
var debug = os.Getenv("LPDEBUG") != ""
