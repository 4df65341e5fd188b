// Package deploy holds no code that orbitwatch runs: it is the directory of
// deployment files, and its Go tests exercise them. It holds
//
//   - nats/: a three-server NATS JetStream cluster configuration;
//   - systemd/: units for those servers and for orbitwatch workers;
//   - container/: the worker's image definition (multi-stage build, non-root);
//   - k8s/: a StatefulSet of workers with a headless Service, a ConfigMap and
//     a PersistentVolumeClaim template per worker for its Badger store.
//
// The tests start the cluster configuration as three real nats-server
// processes (built from the nats-server module go.mod pins), kill one of them
// while events are published, and check the stream and the counts; they parse
// the systemd, container and Kubernetes files and check that the values that
// must agree do (ports, paths, probes, flags). The container and Kubernetes
// files are not run here: these machines have neither. See README.md.
//
// It is not for wiring the binary (cmd/orbitwatch) or for the workers'
// runtime (package shard).
package deploy
