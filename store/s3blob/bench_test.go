package s3blob_test

import (
	"context"
	"math/rand/v2"
	"testing"

	"ridgeflank/geo/gdal"
	"ridgeflank/store"
	"ridgeflank/store/s3blob/s3test"
)

// BenchmarkWindowRead opens a stored COG (4096 × 2048 Float32 cells of noise, about 32 MB, so
// more than GDAL's 16 MiB range cache) and reads one 256 × 256 window at a random place, from
// the grid directory and, through /vsis3/, from a bucket of the in-process fake and of a
// SeaweedFS server (both on loopback). Compare the ns/op of one run.
func BenchmarkWindowRead(b *testing.B) {
	src := noiseCOG(b, 4096, 2048, 1, 0, 1000)
	r := rand.New(rand.NewPCG(1, 2))
	for _, c := range []struct {
		name  string
		blobs func(b *testing.B) store.Blobs
	}{
		{"directory", func(b *testing.B) store.Blobs {
			dir, err := store.NewGridFiles(b.TempDir())
			if err != nil {
				b.Fatal(err)
			}
			return dir
		}},
		{"bucket", func(b *testing.B) store.Blobs { return benchBucket(b, s3test.Start(b, "bench")) }},
		{"bucket-seaweedfs", func(b *testing.B) store.Blobs { return benchBucket(b, s3test.StartSeaweed(b, "bench")) }},
	} {
		b.Run(c.name, func(b *testing.B) {
			blobs := c.blobs(b)
			info, err := blobs.Put(context.Background(), "", store.CopyFile(src))
			if err != nil {
				b.Fatal(err)
			}
			path, err := blobs.Path(info.Key)
			if err != nil {
				b.Fatal(err)
			}
			b.ReportAllocs()
			dst := make([]float32, 256*256)
			for b.Loop() {
				d, err := gdal.Open(path, gdal.ReadOptions{})
				if err != nil {
					b.Fatal(err)
				}
				if err := d.ReadWindow(0, r.IntN(4096-256), r.IntN(2048-256), 256, 256, dst); err != nil {
					b.Fatal(err)
				}
				d.Close()
			}
		})
	}
}

func benchBucket(b *testing.B, srv *s3test.Server) store.Blobs {
	url, cfg := srv.Config("bench")
	bucket, err := openBlobs(url, cfg)
	if err != nil {
		b.Fatal(err)
	}
	return bucket
}
