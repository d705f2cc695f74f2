package gdal

/*
#cgo pkg-config: gdal proj
#cgo LDFLAGS: -ldl -lm
#include <stdlib.h>
#include <cpl_conv.h>
#include <gdal.h>
#include "rfgdal.h"
*/
import "C"

import (
	"fmt"
	"os"
	"strings"
	"sync"
	"unsafe"
)

// DefaultCacheMaxMB bounds GDAL's raster block cache (GDAL_CACHEMAX) unless the environment
// sets GDAL_CACHEMAX. Without a bound a full read of a 233 MB grid peaks near 530 MB.
const DefaultCacheMaxMB = 64

var initOnce sync.Once

// ensureInit registers the drivers, installs a quiet global error handler (errors are
// collected per call instead), bounds the block cache, lets GeoTIFF decompress on all cores
// and silences HDF5's diagnostic printing. Environment variables GDAL_CACHEMAX and
// GDAL_NUM_THREADS override the defaults.
func ensureInit() {
	initOnce.Do(func() {
		setConfigDefault("GDAL_CACHEMAX", fmt.Sprint(DefaultCacheMaxMB))
		setConfigDefault("GDAL_NUM_THREADS", "ALL_CPUS")
		C.rf_init()
	})
}

func setConfigDefault(key, value string) {
	if _, ok := os.LookupEnv(key); ok {
		return
	}
	ck, cv := C.CString(key), C.CString(value)
	defer C.free(unsafe.Pointer(ck))
	defer C.free(unsafe.Pointer(cv))
	C.CPLSetConfigOption(ck, cv)
}

// SetConfigOptions sets GDAL configuration options for the whole process (CPLSetConfigOption),
// overriding environment variables of the same names; an empty value unsets an option. The
// object store backend uses it to point /vsis3/ at its server and credentials, so nothing
// has to be exported into the environment.
func SetConfigOptions(opts map[string]string) {
	ensureInit()
	for k, v := range opts {
		ck := C.CString(k)
		var cv *C.char
		if v != "" {
			cv = C.CString(v)
		}
		C.CPLSetConfigOption(ck, cv)
		C.free(unsafe.Pointer(ck))
		if cv != nil {
			C.free(unsafe.Pointer(cv))
		}
	}
}

// hdfMu serialises every call into the netCDF and HDF5 libraries (netCDF, BAG and HDF5
// datasets): neither library is thread-safe as Debian builds them.
var hdfMu sync.Mutex

// cErr turns a per-call error collector into a Go error (nil when GDAL reported no failure).
func cErr(e *C.rf_err, what string) error {
	if e.failed == 0 {
		return nil
	}
	msg := strings.TrimSpace(C.GoString(&e.msg[0]))
	if msg == "" {
		msg = "unknown GDAL failure"
	}
	return fmt.Errorf("%s: %s", what, msg)
}

func cWarn(e *C.rf_err) string { return strings.TrimSpace(C.GoString(&e.warn[0])) }

// cStrings allocates a NULL-terminated C string list; free it with freeCStrings.
func cStrings(items []string) **C.char {
	if len(items) == 0 {
		return nil
	}
	p := (**C.char)(C.calloc(C.size_t(len(items)+1), C.size_t(unsafe.Sizeof(uintptr(0)))))
	s := unsafe.Slice(p, len(items)+1)
	for i, it := range items {
		s[i] = C.CString(it)
	}
	return p
}

func freeCStrings(p **C.char) {
	if p == nil {
		return
	}
	for _, c := range unsafe.Slice(p, 1<<20) {
		if c == nil {
			break
		}
		C.free(unsafe.Pointer(c))
	}
	C.free(unsafe.Pointer(p))
}

// goStrings copies a NULL-terminated GDAL string list (not freed).
func goStrings(p **C.char) []string {
	if p == nil {
		return nil
	}
	var out []string
	for _, c := range unsafe.Slice(p, 1<<24) {
		if c == nil {
			break
		}
		out = append(out, C.GoString(c))
	}
	return out
}

// metadataOf returns the metadata items of a dataset or band in a domain ("" = default).
func metadataOf(obj C.GDALMajorObjectH, domain string) map[string]string {
	var cd *C.char
	if domain != "" {
		cd = C.CString(domain)
		defer C.free(unsafe.Pointer(cd))
	}
	items := goStrings(C.GDALGetMetadata(obj, cd))
	m := make(map[string]string, len(items))
	for _, it := range items {
		if k, v, ok := strings.Cut(it, "="); ok {
			m[k] = v
		}
	}
	return m
}

// cacheMaxBytes reports GDAL's block cache limit (for tests).
func cacheMaxBytes() int64 {
	ensureInit()
	return int64(C.GDALGetCacheMax64())
}
