// C helpers of package gdal: each entry point installs its own GDAL error handler for the
// duration of the call (GDAL's handler stack is per thread, and a cgo call stays on one
// thread), so every failure GDAL reports comes back to Go as text instead of being printed.

#include <dlfcn.h>
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <string.h>

#include <cpl_conv.h>
#include <cpl_error.h>
#include <cpl_string.h>
#include <cpl_vsi.h>
#include <gdal.h>
#include <gdal_utils.h>
#include <geodesic.h>
#include <ogr_srs_api.h>

#include "rfgdal.h"

static void CPL_STDCALL rf_quiet_handler(CPLErr cls, CPLErrorNum no, const char *msg) {
	(void)cls;
	(void)no;
	(void)msg;
}

static void rf_append(char *buf, size_t cap, const char *msg) {
	size_t n = strlen(buf);
	if (n + 3 >= cap) return;
	if (n > 0) {
		strncat(buf, "; ", cap - n - 1);
		n += 2;
	}
	strncat(buf, msg, cap - n - 1);
}

static void CPL_STDCALL rf_collect_handler(CPLErr cls, CPLErrorNum no, const char *msg) {
	(void)no;
	rf_err *e = (rf_err *)CPLGetErrorHandlerUserData();
	if (e == NULL || msg == NULL) return;
	if (cls >= CE_Failure) {
		e->failed++;
		rf_append(e->msg, sizeof e->msg, msg);
	} else if (cls == CE_Warning) {
		rf_append(e->warn, sizeof e->warn, msg);
	}
}

static void rf_fail(rf_err *e, const char *msg) {
	e->failed++;
	rf_append(e->msg, sizeof e->msg, msg);
}

/* HDF5 prints "HDF5-DIAG" blocks on stderr from whichever thread touches it; its automatic
   error printing is per thread in thread-safe builds, so it is switched off in every helper.
   H5Eset_auto2 is looked up at run time so that this package does not link HDF5 itself. */
typedef int (*rf_h5eset_fn)(int64_t, void *, void *);
static rf_h5eset_fn rf_h5eset = NULL;

static void rf_silence_hdf5(void) {
	if (rf_h5eset != NULL) rf_h5eset(0 /* H5E_DEFAULT */, NULL, NULL);
}

#define RF_BEGIN(e)                                         \
	do {                                                    \
		memset((e), 0, sizeof *(e));                        \
		CPLPushErrorHandlerEx(rf_collect_handler, (e));     \
		rf_silence_hdf5();                                  \
	} while (0)
#define RF_END() CPLPopErrorHandler()

static struct geod_geodesic rf_wgs84;

void rf_init(void) {
	GDALAllRegister();
	CPLSetErrorHandler(rf_quiet_handler);
	rf_h5eset = (rf_h5eset_fn)dlsym(RTLD_DEFAULT, "H5Eset_auto2");
	rf_silence_hdf5();
	/* WGS84: a = 6378137 m, f = 1/298.257223563 (NIMA TR8350.2). */
	geod_init(&rf_wgs84, 6378137.0, 1 / 298.257223563);
}

GDALDatasetH rf_open(const char *path, rf_err *e) {
	RF_BEGIN(e);
	GDALDatasetH ds = GDALOpenEx(path, GDAL_OF_RASTER | GDAL_OF_READONLY | GDAL_OF_VERBOSE_ERROR, NULL, NULL, NULL);
	if (ds == NULL && e->failed == 0) rf_fail(e, "GDAL cannot open the file as a raster");
	RF_END();
	return ds;
}

int rf_info(GDALDatasetH ds, int band, rf_info_t *out, rf_err *e) {
	RF_BEGIN(e);
	int ok = 0;
	memset(out, 0, sizeof *out);
	out->nx = GDALGetRasterXSize(ds);
	out->ny = GDALGetRasterYSize(ds);
	out->nbands = GDALGetRasterCount(ds);
	out->has_gt = GDALGetGeoTransform(ds, out->gt) == CE_None;
	GDALDriverH drv = GDALGetDatasetDriver(ds);
	if (drv != NULL) snprintf(out->driver, sizeof out->driver, "%s", GDALGetDriverShortName(drv));
	out->angular_deg = 1;
	OGRSpatialReferenceH srs = GDALGetSpatialRef(ds);
	if (srs != NULL) {
		const char *name = OSRGetName(srs);
		if (name != NULL) snprintf(out->crs_name, sizeof out->crs_name, "%s", name);
		if (OSRIsProjected(srs)) {
			out->crs_kind = 2;
		} else if (OSRIsGeographic(srs)) {
			out->crs_kind = 1;
			char *unit = NULL;
			double rad = OSRGetAngularUnits(srs, &unit);
			if (rad > 0) out->angular_deg = rad * 180 / M_PI;
			char *pm = NULL;
			out->prime_meridian_deg = OSRGetPrimeMeridian(srs, &pm);
		} else {
			out->crs_kind = 3;
		}
	}
	if (band >= 1 && band <= out->nbands) {
		GDALRasterBandH b = GDALGetRasterBand(ds, band);
		int has = 0;
		out->nodata = GDALGetRasterNoDataValue(b, &has);
		out->has_nodata = has;
		out->scale = GDALGetRasterScale(b, &has);
		if (!has) out->scale = 1;
		out->offset = GDALGetRasterOffset(b, &has);
		if (!has) out->offset = 0;
		const char *u = GDALGetRasterUnitType(b);
		if (u != NULL) snprintf(out->units, sizeof out->units, "%s", u);
		const char *d = GDALGetDescription(b);
		if (d != NULL) snprintf(out->desc, sizeof out->desc, "%s", d);
	}
	ok = e->failed == 0;
	RF_END();
	return ok;
}

int rf_read_rows(GDALDatasetH ds, int band, int row0, int nrows, int nx, float *buf, rf_err *e) {
	RF_BEGIN(e);
	GDALRasterBandH b = GDALGetRasterBand(ds, band);
	int ok = 0;
	if (b == NULL) {
		rf_fail(e, "no such band");
	} else {
		CPLErr err = GDALRasterIO(b, GF_Read, 0, row0, nx, nrows, buf, nx, nrows, GDT_Float32, 0, 0);
		ok = err == CE_None && e->failed == 0;
		if (!ok && e->failed == 0) rf_fail(e, "raster read failed");
	}
	RF_END();
	return ok;
}

void rf_close(GDALDatasetH ds, rf_err *e) {
	RF_BEGIN(e);
	GDALClose(ds);
	RF_END();
}

GDALDatasetH rf_warp_lonlat(GDALDatasetH src, rf_err *e) {
	RF_BEGIN(e);
	char *argv[] = {"-t_srs", "EPSG:4326", "-of", "MEM", "-r", "bilinear", "-ot", "Float32",
	                "-dstnodata", "nan", "-wo", "INIT_DEST=NO_DATA", NULL};
	GDALDatasetH out = NULL;
	GDALWarpAppOptions *o = GDALWarpAppOptionsNew(argv, NULL);
	if (o != NULL) {
		int usage = 0;
		out = GDALWarp("", NULL, 1, &src, o, &usage);
		GDALWarpAppOptionsFree(o);
	}
	if (out == NULL && e->failed == 0) rf_fail(e, "reprojection to longitude/latitude failed");
	RF_END();
	return out;
}

int rf_write(const char *driver, const char *path, float *data, int nx, int ny, const double *gt,
             int has_nodata, double nodata, const char *units, const char *desc, char **ds_md,
             char **band_md, char **copts, rf_err *e) {
	RF_BEGIN(e);
	int ok = 0;
	GDALDatasetH src = NULL, dst = NULL;
	GDALDriverH mem = GDALGetDriverByName("MEM");
	GDALDriverH drv = GDALGetDriverByName(driver);
	if (mem == NULL || drv == NULL) {
		rf_fail(e, "GDAL driver not available");
		goto done;
	}
	src = GDALCreate(mem, "", nx, ny, 0, GDT_Float32, NULL);
	if (src == NULL) goto done;
	/* Wrap the caller's buffer instead of copying it; it stays valid for this call only. */
	char ptr[96], pix[64], line[64];
	snprintf(ptr, sizeof ptr, "DATAPOINTER=%p", (void *)data);
	snprintf(pix, sizeof pix, "PIXELOFFSET=%d", (int)sizeof(float));
	snprintf(line, sizeof line, "LINEOFFSET=%lld", (long long)nx * (long long)sizeof(float));
	char *bopts[] = {ptr, pix, line, NULL};
	if (GDALAddBand(src, GDT_Float32, bopts) != CE_None) goto done;
	GDALSetGeoTransform(src, (double *)gt);
	OGRSpatialReferenceH srs = OSRNewSpatialReference(NULL);
	OSRImportFromEPSG(srs, 4326);
	OSRSetAxisMappingStrategy(srs, OAMS_TRADITIONAL_GIS_ORDER);
	GDALSetSpatialRef(src, srs);
	OSRDestroySpatialReference(srs);
	GDALRasterBandH b = GDALGetRasterBand(src, 1);
	if (has_nodata) GDALSetRasterNoDataValue(b, nodata);
	if (units != NULL && units[0] != 0) GDALSetRasterUnitType(b, units);
	if (desc != NULL && desc[0] != 0) GDALSetDescription(b, desc);
	if (band_md != NULL) GDALSetMetadata(b, band_md, NULL);
	if (ds_md != NULL) GDALSetMetadata(src, ds_md, NULL);
	if (e->failed) goto done;
	dst = GDALCreateCopy(drv, path, src, FALSE, copts, GDALDummyProgress, NULL);
	if (dst != NULL) {
		GDALClose(dst); /* flushes; failures arrive through the handler */
		ok = e->failed == 0;
	} else if (e->failed == 0) {
		rf_fail(e, "GDAL could not create the file");
	}
done:
	if (src != NULL) GDALClose(src);
	RF_END();
	return ok;
}

unsigned char *rf_vsimem_take(const char *name, unsigned long long *len) {
	vsi_l_offset n = 0;
	unsigned char *p = VSIGetMemFileBuffer(name, &n, TRUE);
	*len = (unsigned long long)n;
	return p;
}

/* Results returned by value so that the Go side allocates nothing. */
rf_triple rf_geod_inverse(double lat1, double lon1, double lat2, double lon2) {
	rf_triple r;
	geod_inverse(&rf_wgs84, lat1, lon1, lat2, lon2, &r.v[0], &r.v[1], &r.v[2]);
	return r;
}

rf_triple rf_geod_direct(double lat1, double lon1, double azi1, double s12) {
	rf_triple r;
	r.v[2] = 0;
	geod_direct(&rf_wgs84, lat1, lon1, azi1, s12, &r.v[0], &r.v[1], NULL);
	return r;
}

/* Points k0·step, (k0+1)·step, …, (k0+n−1)·step along the geodesic leaving (lat1, lon1) at
   azimuth azi1, as lat,lon pairs in out (2n doubles): the line is set up once
   (geod_lineinit) and each point placed with geod_position, the same arithmetic as
   geod_direct without redoing the set-up per point. */
void rf_geod_steps(double lat1, double lon1, double azi1, double step, int k0, int n, double *out) {
	struct geod_geodesicline l;
	geod_lineinit(&l, &rf_wgs84, lat1, lon1, azi1, GEOD_LATITUDE | GEOD_LONGITUDE | GEOD_DISTANCE_IN);
	for (int i = 0; i < n; i++) {
		geod_position(&l, (double)(k0 + i) * step, &out[2 * i], &out[2 * i + 1], NULL);
	}
}

/* Points along the geodesic from (lat1, lon1) to (lat2, lon2) at distances 0, spacing,
   2·spacing, ... and the end point, as lat,lon pairs in out (capacity max_pts points).
   Returns the number of points, or −(needed) when out is too small. */
int rf_geod_line(double lat1, double lon1, double lat2, double lon2, double spacing, double *out, int max_pts, double *total) {
	struct geod_geodesicline l;
	geod_inverseline(&l, &rf_wgs84, lat1, lon1, lat2, lon2, 0);
	double s13 = l.s13;
	*total = s13;
	long long nfull = (long long)floor(s13 / spacing);
	long long n = nfull + 1;
	if ((double)nfull * spacing < s13 * (1 - 1e-12)) n++; /* end point after a shorter step */
	if (s13 == 0) n = 1;
	if (n > max_pts) return (int)-n;
	for (long long i = 0; i < n; i++) {
		double s = (double)i * spacing;
		if (s > s13 || i == n - 1) s = s13;
		double lat, lon;
		if (i == 0) {
			lat = lat1;
			lon = lon1;
		} else {
			geod_position(&l, s, &lat, &lon, NULL);
		}
		out[2 * i] = lat;
		out[2 * i + 1] = lon;
	}
	if (n > 1) { /* exact end point as given, not the recomputed one */
		out[2 * (n - 1)] = lat2;
		out[2 * (n - 1) + 1] = lon2;
	}
	return (int)n;
}

/* ---- streaming COG writer ---- */

static OGRSpatialReferenceH rf_wgs84_srs(void) {
	OGRSpatialReferenceH srs = OSRNewSpatialReference(NULL);
	OSRImportFromEPSG(srs, 4326);
	OSRSetAxisMappingStrategy(srs, OAMS_TRADITIONAL_GIS_ORDER);
	return srs;
}

/* Creates the staging GeoTIFF: float32, tiles of bx×by, no-data NaN, EPSG:4326, geotransform gt. */
GDALDatasetH rf_stage_create(const char *path, int nx, int ny, int bx, int by, const double *gt, char **copts, rf_err *e) {
	RF_BEGIN(e);
	GDALDatasetH ds = NULL;
	GDALDriverH drv = GDALGetDriverByName("GTiff");
	if (drv == NULL) {
		rf_fail(e, "GDAL driver GTiff not available");
		goto done;
	}
	char **o = CSLDuplicate(copts);
	o = CSLSetNameValue(o, "TILED", "YES");
	char num[32];
	snprintf(num, sizeof num, "%d", bx);
	o = CSLSetNameValue(o, "BLOCKXSIZE", num);
	snprintf(num, sizeof num, "%d", by);
	o = CSLSetNameValue(o, "BLOCKYSIZE", num);
	ds = GDALCreate(drv, path, nx, ny, 1, GDT_Float32, o);
	CSLDestroy(o);
	if (ds == NULL) {
		if (e->failed == 0) rf_fail(e, "GDAL could not create the staging file");
		goto done;
	}
	GDALSetGeoTransform(ds, (double *)gt);
	OGRSpatialReferenceH srs = rf_wgs84_srs();
	GDALSetSpatialRef(ds, srs);
	OSRDestroySpatialReference(srs);
	GDALSetRasterNoDataValue(GDALGetRasterBand(ds, 1), NAN);
	if (e->failed) {
		GDALClose(ds);
		ds = NULL;
	}
done:
	RF_END();
	return ds;
}

/* Writes nrows whole rows (row0 a multiple of the tile height, nrows the tile height except at
   the bottom) tile by tile with GDALWriteBlock, so that GDAL's block cache never holds a
   partial tile; tile holds one bx×by tile. Cells outside the raster are padded with NaN. */
int rf_stage_write(GDALDatasetH ds, int row0, int nrows, int nx, const float *rows, float *tile, rf_err *e) {
	RF_BEGIN(e);
	int ok = 0;
	GDALRasterBandH b = GDALGetRasterBand(ds, 1);
	int bx = 0, by = 0;
	GDALGetBlockSize(b, &bx, &by);
	if (by <= 0 || row0 % by != 0 || nrows > by) {
		rf_fail(e, "staging write is not aligned to the tiles");
		goto done;
	}
	int ty = row0 / by;
	for (int tx = 0; tx * bx < nx; tx++) {
		int x0 = tx * bx;
		int w = nx - x0 < bx ? nx - x0 : bx;
		for (int r = 0; r < by; r++) {
			float *dst = tile + (size_t)r * bx;
			if (r < nrows) {
				memcpy(dst, rows + (size_t)r * nx + x0, (size_t)w * sizeof(float));
				for (int c = w; c < bx; c++) dst[c] = NAN;
			} else {
				for (int c = 0; c < bx; c++) dst[c] = NAN;
			}
		}
		if (GDALWriteBlock(b, tx, ty, tile) != CE_None) {
			if (e->failed == 0) rf_fail(e, "writing the staging file failed");
			goto done;
		}
	}
	ok = e->failed == 0;
done:
	RF_END();
	return ok;
}

static int CPL_STDCALL rf_progress_fn(double f, const char *msg, void *arg) {
	(void)msg;
	rf_progress *p = (rf_progress *)arg;
	if (p == NULL) return TRUE;
	p->fraction = f;
	return !p->cancel;
}

/* Records the metadata on the staging file, closes it, reopens it read-only and copies it to
   dst with the COG driver. The staging handle is closed in every case. */
int rf_stage_finish(GDALDatasetH stage, const char *stage_path, const char *dst, const char *units, const char *desc,
                    char **ds_md, char **band_md, char **copts, rf_progress *p, rf_err *e) {
	RF_BEGIN(e);
	int ok = 0;
	GDALDatasetH src = NULL, out = NULL;
	GDALRasterBandH b = GDALGetRasterBand(stage, 1);
	if (units != NULL && units[0] != 0) GDALSetRasterUnitType(b, units);
	if (desc != NULL && desc[0] != 0) GDALSetDescription(b, desc);
	if (band_md != NULL) GDALSetMetadata(b, band_md, NULL);
	if (ds_md != NULL) GDALSetMetadata(stage, ds_md, NULL);
	GDALClose(stage); /* flushes tiles and metadata; failures arrive through the handler */
	if (e->failed) goto done;
	src = GDALOpenEx(stage_path, GDAL_OF_RASTER | GDAL_OF_READONLY | GDAL_OF_VERBOSE_ERROR, NULL, NULL, NULL);
	if (src == NULL) {
		if (e->failed == 0) rf_fail(e, "GDAL cannot reopen the staging file");
		goto done;
	}
	GDALDriverH drv = GDALGetDriverByName("COG");
	if (drv == NULL) {
		rf_fail(e, "GDAL driver COG not available");
		goto done;
	}
	out = GDALCreateCopy(drv, dst, src, FALSE, copts, rf_progress_fn, p);
	if (out != NULL) {
		GDALClose(out);
		ok = e->failed == 0;
	} else if (e->failed == 0) {
		rf_fail(e, p != NULL && p->cancel ? "cancelled" : "GDAL could not create the file");
	}
done:
	if (src != NULL) GDALClose(src);
	RF_END();
	return ok;
}

/* GDALTranslate(src → dst) with command-line style options (the library form of the
   translate tool). */
int rf_translate(const char *src, const char *dst, char **argv, rf_progress *p, rf_err *e) {
	RF_BEGIN(e);
	int ok = 0;
	GDALDatasetH in = GDALOpenEx(src, GDAL_OF_RASTER | GDAL_OF_READONLY | GDAL_OF_VERBOSE_ERROR, NULL, NULL, NULL);
	if (in == NULL) {
		if (e->failed == 0) rf_fail(e, "GDAL cannot open the file as a raster");
		goto done;
	}
	GDALTranslateOptions *o = GDALTranslateOptionsNew(argv, NULL);
	if (o == NULL) {
		if (e->failed == 0) rf_fail(e, "bad translate options");
		goto done;
	}
	GDALTranslateOptionsSetProgress(o, rf_progress_fn, p);
	int usage = 0;
	GDALDatasetH out = GDALTranslate(dst, in, o, &usage);
	GDALTranslateOptionsFree(o);
	if (out != NULL) {
		GDALClose(out);
		ok = e->failed == 0;
	} else if (e->failed == 0) {
		rf_fail(e, "translate failed");
	}
done:
	if (in != NULL) GDALClose(in);
	RF_END();
	return ok;
}

int rf_overviews(GDALDatasetH ds, int band, int *sizes, int max, rf_err *e) {
	RF_BEGIN(e);
	int n = 0;
	GDALRasterBandH b = GDALGetRasterBand(ds, band);
	if (b == NULL) {
		rf_fail(e, "no such band");
	} else {
		int k = GDALGetOverviewCount(b);
		for (int i = 0; i < k && n < max; i++) {
			GDALRasterBandH o = GDALGetOverview(b, i);
			if (o == NULL) continue;
			sizes[2 * n] = GDALGetRasterBandXSize(o);
			sizes[2 * n + 1] = GDALGetRasterBandYSize(o);
			n++;
		}
	}
	RF_END();
	return n;
}

int rf_read_window(GDALDatasetH ds, int band, int level, int x0, int y0, int nx, int ny, float *buf, rf_err *e) {
	RF_BEGIN(e);
	int ok = 0;
	GDALRasterBandH b = GDALGetRasterBand(ds, band);
	if (b != NULL && level > 0) b = GDALGetOverview(b, level - 1);
	if (b == NULL) {
		rf_fail(e, "no such band or overview");
	} else {
		CPLErr err = GDALRasterIO(b, GF_Read, x0, y0, nx, ny, buf, nx, ny, GDT_Float32, 0, 0);
		ok = err == CE_None && e->failed == 0;
		if (!ok && e->failed == 0) rf_fail(e, "raster read failed");
	}
	RF_END();
	return ok;
}

void rf_set_cache_max(long long bytes) { GDALSetCacheMax64((GIntBig)bytes); }
/* Creates a one-band float32 raster with driver (for row-by-row writing with rf_write_rows):
   geotransform, EPSG:4326, no-data, units, band description and metadata are set before any
   value is written (the netCDF driver defines its variables then). */
GDALDatasetH rf_create(const char *driver, const char *path, int nx, int ny, const double *gt,
                       int has_nodata, double nodata, const char *units, const char *desc, char **ds_md,
                       char **band_md, char **copts, rf_err *e) {
	RF_BEGIN(e);
	GDALDatasetH ds = NULL;
	GDALDriverH drv = GDALGetDriverByName(driver);
	if (drv == NULL) {
		rf_fail(e, "GDAL driver not available");
		goto done;
	}
	ds = GDALCreate(drv, path, nx, ny, 1, GDT_Float32, copts);
	if (ds == NULL) {
		if (e->failed == 0) rf_fail(e, "GDAL could not create the file");
		goto done;
	}
	GDALSetGeoTransform(ds, (double *)gt);
	OGRSpatialReferenceH srs = OSRNewSpatialReference(NULL);
	OSRImportFromEPSG(srs, 4326);
	OSRSetAxisMappingStrategy(srs, OAMS_TRADITIONAL_GIS_ORDER);
	GDALSetSpatialRef(ds, srs);
	OSRDestroySpatialReference(srs);
	if (ds_md != NULL) GDALSetMetadata(ds, ds_md, NULL);
	GDALRasterBandH b = GDALGetRasterBand(ds, 1);
	if (band_md != NULL) {
		for (char **kv = band_md; *kv != NULL; kv++) {
			char *key = NULL;
			const char *val = CPLParseNameValue(*kv, &key);
			if (key != NULL && val != NULL) GDALSetMetadataItem(b, key, val, NULL);
			CPLFree(key);
		}
	}
	if (has_nodata) GDALSetRasterNoDataValue(b, nodata);
	if (units != NULL && units[0] != 0) GDALSetRasterUnitType(b, units);
	if (desc != NULL && desc[0] != 0) GDALSetDescription(b, desc);
	if (e->failed) {
		GDALClose(ds);
		ds = NULL;
	}
done:
	RF_END();
	return ds;
}

/* Writes nrows whole rows from row0 of band 1. */
int rf_write_rows(GDALDatasetH ds, int row0, int nrows, int nx, const float *rows, rf_err *e) {
	RF_BEGIN(e);
	GDALRasterBandH b = GDALGetRasterBand(ds, 1);
	CPLErr err = GDALRasterIO(b, GF_Write, 0, row0, nx, nrows, (void *)rows, nx, nrows, GDT_Float32, 0, 0);
	int ok = err == CE_None && e->failed == 0;
	if (!ok && e->failed == 0) rf_fail(e, "raster write failed");
	RF_END();
	return ok;
}
