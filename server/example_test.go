package server_test

import (
	"encoding/json"
	"fmt"
	"math"
	"net/http/httptest"

	"ridgeflank/server"
)

// The age-only endpoints need no stored grid: the GDH1 predicted depth at
// 100 Ma (Stein & Stein 1992 give 5651 − 2473·e^(−2.78) ≈ 5497 m with their
// fit; the model itself is printed rounded to 10 m).
func ExampleNew() {
	h := server.New(server.Deps{Version: "example"})
	rec := httptest.NewRecorder()
	h.ServeHTTP(rec, httptest.NewRequest("GET", "/api/models/gdh1/curve?ages=100", nil))
	var c struct {
		DepthM []float64 `json:"depth_m"`
	}
	_ = json.Unmarshal(rec.Body.Bytes(), &c)
	fmt.Println(rec.Code, rec.Header().Get("Ridgeflank-Caution") != "")
	fmt.Printf("%.0f m\n", math.Round(c.DepthM[0]/10)*10)
	// Output:
	// 200 true
	// 5500 m
}
