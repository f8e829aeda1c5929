// Package deploy holds halovet's container image, compose file and Kubernetes manifests;
// its tests check that they agree with each other and with the halovet binary.
package deploy
