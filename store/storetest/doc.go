// Package storetest is the contract test suite every store.Store implementation must pass.
package storetest
