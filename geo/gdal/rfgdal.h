#ifndef RIDGEFLANK_RFGDAL_H
#define RIDGEFLANK_RFGDAL_H

#include <gdal.h>

/* Error collector for one call: failures and warnings GDAL reported while it ran. */
typedef struct {
	char msg[2048];
	char warn[1024];
	int failed;
} rf_err;

/* Raster description filled by rf_info. */
typedef struct {
	int nx, ny, nbands;
	int has_gt;
	double gt[6];
	int crs_kind; /* 0 none, 1 geographic, 2 projected, 3 other */
	double angular_deg; /* size of the angular unit in degrees (1 for degrees) */
	double prime_meridian_deg;
	char crs_name[256];
	char driver[64];
	int has_nodata;
	double nodata;
	double scale, offset;
	char units[128];
	char desc[256];
} rf_info_t;

void rf_init(void);
GDALDatasetH rf_open(const char *path, rf_err *e);
int rf_info(GDALDatasetH ds, int band, rf_info_t *out, rf_err *e);
int rf_read_rows(GDALDatasetH ds, int band, int row0, int nrows, int nx, float *buf, rf_err *e);
void rf_close(GDALDatasetH ds, rf_err *e);
int rf_overviews(GDALDatasetH ds, int band, int *sizes, int max, rf_err *e);
int rf_read_window(GDALDatasetH ds, int band, int level, int x0, int y0, int nx, int ny, float *buf, rf_err *e);
void rf_set_cache_max(long long bytes);
GDALDatasetH rf_warp_lonlat(GDALDatasetH src, rf_err *e);
int rf_write(const char *driver, const char *path, float *data, int nx, int ny, const double *gt,
             int has_nodata, double nodata, const char *units, const char *desc, char **ds_md,
             char **band_md, char **copts, rf_err *e);
/* Streaming COG writer: rows go block by block into a tiled staging GeoTIFF, which is then
   copied to a COG. The progress struct is polled by Go (no callbacks into Go). */
typedef struct {
	volatile double fraction;
	volatile int cancel;
} rf_progress;
GDALDatasetH rf_stage_create(const char *path, int nx, int ny, int bx, int by, const double *gt, char **copts, rf_err *e);
int rf_stage_write(GDALDatasetH ds, int row0, int nrows, int nx, const float *rows, float *tile, rf_err *e);
int rf_stage_finish(GDALDatasetH stage, const char *stage_path, const char *dst, const char *units, const char *desc,
                    char **ds_md, char **band_md, char **copts, rf_progress *p, rf_err *e);
GDALDatasetH rf_create(const char *driver, const char *path, int nx, int ny, const double *gt,
                       int has_nodata, double nodata, const char *units, const char *desc, char **ds_md,
                       char **band_md, char **copts, rf_err *e);
int rf_write_rows(GDALDatasetH ds, int row0, int nrows, int nx, const float *rows, rf_err *e);
int rf_translate(const char *src, const char *dst, char **argv, rf_progress *p, rf_err *e);
unsigned char *rf_vsimem_take(const char *name, unsigned long long *len);

/* PROJ geodesics (Karney 2013) on WGS84. */
typedef struct {
	double v[3];
} rf_triple;
rf_triple rf_geod_inverse(double lat1, double lon1, double lat2, double lon2);
rf_triple rf_geod_direct(double lat1, double lon1, double azi1, double s12);
int rf_geod_line(double lat1, double lon1, double lat2, double lon2, double spacing, double *out, int max_pts, double *total);
void rf_geod_steps(double lat1, double lon1, double azi1, double step, int k0, int n, double *out);

#endif
