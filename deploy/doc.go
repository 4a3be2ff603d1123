// Package deploy holds the deployment files (systemd unit, container image,
// Kubernetes manifests, Prometheus alert rules, Alertmanager and Grafana
// examples) and the tests that lint them with real tools.
package deploy
