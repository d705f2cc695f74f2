package s3blob

import (
	"context"
	"fmt"
	"io"
	"os"
	"time"

	"github.com/aws/aws-sdk-go-v2/aws"
	"github.com/aws/aws-sdk-go-v2/service/s3"

	"ridgeflank/store"
)

var _ store.SharedFiles = (*Blobs)(nil)

// The shared files live beside the grid files, under prefix + "uploads/" and + "exports/"
// (List and Sweep of the grid files see only the objects directly under the prefix).

func (b *Blobs) sharedObject(name string) (string, error) {
	if err := store.SharedFileName(name); err != nil {
		return "", err
	}
	return b.prefix + name, nil
}

// PutFile implements store.SharedFiles.
func (b *Blobs) PutFile(ctx context.Context, name, src string) error {
	object, err := b.sharedObject(name)
	if err != nil {
		return err
	}
	f, err := os.Open(src)
	if err != nil {
		return err
	}
	defer f.Close()
	fi, err := f.Stat()
	if err != nil {
		return err
	}
	if err := b.upload(ctx, object, f, fi.Size()); err != nil {
		return fmt.Errorf("object store: storing %s: %w", name, err)
	}
	return nil
}

// GetFile implements store.SharedFiles.
func (b *Blobs) GetFile(ctx context.Context, name, dst string) error {
	object, err := b.sharedObject(name)
	if err != nil {
		return err
	}
	out, err := b.client.GetObject(ctx, &s3.GetObjectInput{Bucket: &b.bucket, Key: &object})
	if err != nil {
		if statusOf(err) == 404 {
			return fmt.Errorf("shared file %s: %w", name, store.ErrNotFound)
		}
		return fmt.Errorf("object store: %w", err)
	}
	defer out.Body.Close()
	f, err := os.OpenFile(dst, os.O_WRONLY|os.O_CREATE|os.O_TRUNC, 0o600)
	if err != nil {
		return err
	}
	if _, err := io.Copy(f, out.Body); err != nil {
		f.Close()
		os.Remove(dst)
		return fmt.Errorf("object store: fetching %s: %w", name, err)
	}
	return f.Close()
}

// OpenFile implements store.SharedFiles.
func (b *Blobs) OpenFile(ctx context.Context, name string) (io.ReadSeekCloser, error) {
	object, err := b.sharedObject(name)
	if err != nil {
		return nil, err
	}
	return b.openObject(ctx, object, "shared file "+name)
}

// RemoveFile implements store.SharedFiles.
func (b *Blobs) RemoveFile(ctx context.Context, name string) error {
	object, err := b.sharedObject(name)
	if err != nil {
		return err
	}
	if _, err := b.client.DeleteObject(ctx, &s3.DeleteObjectInput{Bucket: &b.bucket, Key: &object}); err != nil && statusOf(err) != 404 {
		return fmt.Errorf("object store: %w", err)
	}
	return nil
}

// SweepFiles implements store.SharedFiles.
func (b *Blobs) SweepFiles(ctx context.Context, folder string, olderThan time.Duration) (int, error) {
	if err := store.SharedFileName(folder + "/x"); err != nil {
		return 0, err
	}
	objs, err := b.list(ctx, folder+"/")
	if err != nil {
		return 0, err
	}
	n := 0
	for _, o := range objs {
		if time.Since(o.modified) < olderThan {
			continue
		}
		k := b.prefix + o.key
		if _, err := b.client.DeleteObject(ctx, &s3.DeleteObjectInput{Bucket: &b.bucket, Key: aws.String(k)}); err != nil && statusOf(err) != 404 {
			return n, fmt.Errorf("object store: %w", err)
		}
		n++
	}
	return n, nil
}
