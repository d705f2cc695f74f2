// Package e2etest drives the built browser page in headless Chromium (chromedp) against a real ridgeflank server loaded with the synthetic demo basin.
package e2etest
