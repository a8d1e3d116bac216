# planckton-server in a container: Debian 12, built by the same scripts as everywhere else.
#
#   docker build -t planckton .
#   docker run --rm -p 127.0.0.1:8080:8080 planckton
#
# Stage 1 builds with scripts/install-deps (Debian 12 packages only) and scripts/build (Release);
# the tests are not run here (scripts/test-all and CI run them). Stage 2 holds only the server
# binary and the Debian runtime libraries it links.

FROM debian:12-slim AS build
WORKDIR /src
COPY . .
RUN scripts/install-deps && scripts/build

FROM debian:12-slim AS runtime
# Runtime libraries of build/server/planckton-server: its `ldd` output mapped to Debian 12 packages
# with `dpkg -S` (libc6, libstdc++6, libgcc-s1, zlib1g and liblzma5 are in the base image; listed
# where the binary needs them all the same):
#   libcpp-httplib0.11      libcpp-httplib.so.0.11 (the HTTP server)
#   libssl3                 libssl.so.3, libcrypto.so.3 (linked by cpp-httplib)
#   libbrotli1              libbrotlicommon/dec/enc.so.1 (linked by cpp-httplib)
#   zlib1g                  libz.so.1 (linked by cpp-httplib)
#   libsimdjson14           libsimdjson.so.14 (request parsing)
#   libcfitsio10            libcfitsio.so.10 (FITS request bodies)
#   libgoogle-glog0v6       libglog.so.1 (Ceres Solver; libceres is linked statically)
#   libgflags2.2            libgflags.so.2.2 (glog)
#   libunwind8              libunwind.so.8 (glog)
#   liblzma5                liblzma.so.5 (libunwind)
#   libspqr2 libcholmod3 libcxsparse3 libsuitesparseconfig5 libamd2 libcamd2 libccolamd2
#   libcolamd2 libmetis5    SuiteSparse and METIS (Ceres Solver's sparse linear algebra)
#   libatlas3-base          libblas.so.3, liblapack.so.3, libf77blas.so.3, libatlas.so.3 (Ceres
#                           and SuiteSparse; libceres-dev pulls ATLAS into the build stage, so the
#                           binary links its libf77blas/libatlas directly)
#   libgfortran5 libquadmath0  (ATLAS's LAPACK)
#   libgomp1                libgomp.so.1 (OpenMP, SuiteSparse)
#   libstdc++6 libgcc-s1 libc6
# Plus curl, for the HEALTHCHECK below. Re-check this list with `ldd` when the server links
# something new: the `--help` run below fails the image build if a library is missing.
RUN apt-get update \
 && DEBIAN_FRONTEND=noninteractive apt-get install -y --no-install-recommends \
      libcpp-httplib0.11 libssl3 libbrotli1 zlib1g libsimdjson14 libcfitsio10 \
      libgoogle-glog0v6 libgflags2.2 libunwind8 liblzma5 \
      libspqr2 libcholmod3 libcxsparse3 libsuitesparseconfig5 \
      libamd2 libcamd2 libccolamd2 libcolamd2 libmetis5 \
      libatlas3-base libgfortran5 libquadmath0 libgomp1 \
      libstdc++6 libgcc-s1 libc6 \
      curl \
 && rm -rf /var/lib/apt/lists/*

COPY --from=build /src/build/server/planckton-server /usr/local/bin/planckton-server
RUN /usr/local/bin/planckton-server --help >/dev/null \
 && useradd --system --uid 10001 --user-group --no-create-home --home-dir /nonexistent \
      --shell /usr/sbin/nologin planckton

USER 10001:10001

# Listen on every interface, but only inside the container (the server's own default is 127.0.0.1).
# The service is open when no API keys are configured: set PLANCKTON_API_KEYS (comma-separated) or
# PLANCKTON_API_KEYS_FILE (a file mounted read-only) before publishing the port beyond this host
# (e.g. keep `-p 127.0.0.1:8080:8080` until then).
ENV PLANCKTON_BIND=0.0.0.0
EXPOSE 8080

HEALTHCHECK --interval=30s --timeout=3s --start-period=5s --retries=3 \
  CMD curl -fsS -o /dev/null "http://127.0.0.1:${PLANCKTON_PORT:-8080}/v1/health" || exit 1

# Exec form: the server is PID 1 and gets SIGTERM itself (it finishes in-flight requests and
# exits 0).
ENTRYPOINT ["/usr/local/bin/planckton-server"]
