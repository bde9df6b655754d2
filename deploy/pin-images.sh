#!/usr/bin/env bash
# Print the base images by digest, as lines for deploy/.env:
#   bash deploy/pin-images.sh     # review them; they replace the empty FLATPACT_*_IMAGE= lines
#
# A tag (python:3.11-slim-bookworm) can point at another image tomorrow; a digest cannot.
# compose.yaml and the Dockerfile take the images only from these variables and stop when one
# is missing, so what runs is what was reviewed. Run it again to move to newer images on
# purpose. Needs `docker buildx` and access to the registry. The digest printed is the
# image index's (all platforms), from `docker buildx imagetools inspect --format
# '{{json .Manifest}}'`, whose "digest" field is an OCI descriptor's (docs.docker.com,
# buildx imagetools inspect; OCI image spec, descriptor).
set -euo pipefail

IMAGES=(
    "FLATPACT_PYTHON_IMAGE python:3.11-slim-bookworm"
    "FLATPACT_POSTGRES_IMAGE postgres:15-bookworm"
    "FLATPACT_CADDY_IMAGE caddy:2"
)

for entry in "${IMAGES[@]}"; do
    read -r variable tag <<<"$entry"
    digest=$(docker buildx imagetools inspect "$tag" --format '{{json .Manifest}}' |
        python3 -c 'import json, sys; print(json.load(sys.stdin)["digest"])')
    if [[ ! "$digest" =~ ^sha256:[0-9a-f]{64}$ ]]; then
        echo "pin-images: no digest for $tag (got '$digest')" >&2
        exit 1
    fi
    echo "$variable=$tag@$digest"
done
