/* Native reference for the engine benchmark (issue 3): the same two schemes as test/bench/engine-common.ts,
 * written as a C programmer would (padded Float32 buffers, ghost refill per step, buffer swap), single thread.
 * Build: gcc -O3 -march=native -o engine_ref engine_ref.c   (test/bench/engine-native.bench.ts does it)
 * Usage: engine_ref edge|heat N STEPS IN.raw OUT.raw  -> prints "wall_seconds cpu_seconds" of the stepping loop.
 */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

static double seconds(clockid_t clock) {
  struct timespec ts;
  clock_gettime(clock, &ts);
  return ts.tv_sec + ts.tv_nsec * 1e-9;
}

/* Reflect (zero flux) with a one-cell halo: the edge pixel is repeated. */
static void ghosts(float *u, int W, int H) {
  int pw = W + 2;
  for (int y = 1; y <= H; y++) {
    u[y * pw] = u[y * pw + 1];
    u[y * pw + W + 1] = u[y * pw + W];
  }
  memcpy(u, u + pw, sizeof(float) * pw);
  memcpy(u + (H + 1) * pw, u + H * pw, sizeof(float) * pw);
}

static void step_edge(const float *restrict u, float *restrict v, int W, int H, float dt, float iK2) {
  int pw = W + 2;
  for (int y = 1; y <= H; y++) {
    const float *r = u + y * pw;
    float *o = v + y * pw;
    for (int x = 1; x <= W; x++) {
      float c = r[x];
      float e = r[x + 1] - c, w = r[x - 1] - c, s = r[x + pw] - c, n = r[x - pw] - c;
      o[x] = c + dt * (e / (1.0f + e * e * iK2) + w / (1.0f + w * w * iK2) + s / (1.0f + s * s * iK2) + n / (1.0f + n * n * iK2));
    }
  }
}

static void step_heat(const float *restrict u, float *restrict v, int W, int H, float dt) {
  int pw = W + 2;
  for (int y = 1; y <= H; y++) {
    const float *r = u + y * pw;
    float *o = v + y * pw;
    for (int x = 1; x <= W; x++) o[x] = r[x] + dt * (r[x + 1] + r[x - 1] + r[x + pw] + r[x - pw] - 4.0f * r[x]);
  }
}

int main(int argc, char **argv) {
  if (argc != 6) {
    fprintf(stderr, "usage: %s edge|heat N STEPS IN.raw OUT.raw\n", argv[0]);
    return 2;
  }
  int edge = strcmp(argv[1], "edge") == 0;
  int N = atoi(argv[2]), steps = atoi(argv[3]);
  int pw = N + 2;
  size_t cells = (size_t)pw * (N + 2);
  float *u = calloc(cells, sizeof(float)), *v = calloc(cells, sizeof(float));
  float *img = malloc(sizeof(float) * N * N);
  FILE *f = fopen(argv[4], "rb");
  if (!f || fread(img, sizeof(float), (size_t)N * N, f) != (size_t)N * N) {
    fprintf(stderr, "cannot read %s\n", argv[4]);
    return 1;
  }
  fclose(f);
  for (int y = 0; y < N; y++) memcpy(u + (y + 1) * pw + 1, img + (size_t)y * N, sizeof(float) * N);
  const float dt = 0.2f, K = 0.05f, iK2 = 1.0f / (K * K);

  double w0 = seconds(CLOCK_MONOTONIC), c0 = seconds(CLOCK_PROCESS_CPUTIME_ID);
  for (int s = 0; s < steps; s++) {
    ghosts(u, N, N);
    if (edge) step_edge(u, v, N, N, dt, iK2);
    else step_heat(u, v, N, N, dt);
    float *t = u; u = v; v = t;
  }
  double wall = seconds(CLOCK_MONOTONIC) - w0, cpu = seconds(CLOCK_PROCESS_CPUTIME_ID) - c0;

  for (int y = 0; y < N; y++) memcpy(img + (size_t)y * N, u + (y + 1) * pw + 1, sizeof(float) * N);
  f = fopen(argv[5], "wb");
  if (!f || fwrite(img, sizeof(float), (size_t)N * N, f) != (size_t)N * N) {
    fprintf(stderr, "cannot write %s\n", argv[5]);
    return 1;
  }
  fclose(f);
  printf("%.6f %.6f\n", wall, cpu);
  free(u); free(v); free(img);
  return 0;
}
