/* The C baseline of the SIMD benchmark (wasm.bench.ts compiles it with gcc -O3 -march=native and runs it in the
   same process run): 4-neighbour edge-preserving diffusion g(s) = 1/(1 + s^2/K^2) or 5-point heat, Float32,
   reflect halo of one cell refilled every step, one thread. Usage: wasm_ref edge|heat N STEPS; prints the wall
   seconds of the STEPS timed steps (after one warm-up step), the mean of the result and the CPU seconds. */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

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
      float dn = r[x - pw] - c, ds = r[x + pw] - c, dw = r[x - 1] - c, de = r[x + 1] - c;
      float s = dn / (1.0f + dn * dn * iK2) + ds / (1.0f + ds * ds * iK2) + dw / (1.0f + dw * dw * iK2) + de / (1.0f + de * de * iK2);
      o[x] = c + dt * s;
    }
  }
}

static void step_heat(const float *restrict u, float *restrict v, int W, int H, float dt) {
  int pw = W + 2;
  for (int y = 1; y <= H; y++) {
    const float *r = u + y * pw;
    float *o = v + y * pw;
    for (int x = 1; x <= W; x++) {
      float c = r[x];
      o[x] = c + dt * ((r[x - pw] - c) + (r[x + pw] - c) + (r[x - 1] - c) + (r[x + 1] - c));
    }
  }
}

int main(int argc, char **argv) {
  if (argc < 4) return 2;
  int edge = strcmp(argv[1], "edge") == 0, n = atoi(argv[2]), steps = atoi(argv[3]);
  int W = n, H = n, pw = W + 2;
  float *u = calloc((size_t)pw * (H + 2), sizeof(float)), *v = calloc((size_t)pw * (H + 2), sizeof(float));
  unsigned a = 12345;
  for (int y = 0; y < H; y++)
    for (int x = 0; x < W; x++) {
      a = a * 1103515245u + 12345u;
      u[(y + 1) * pw + x + 1] = (float)(a >> 8) / 16777216.0f;
    }
  const float dt = 0.2f, K = 0.05f, iK2 = 1.0f / (K * K);
  struct timespec t0, t1, c0, c1;
  for (int s = -1; s < steps; s++) {
    if (s == 0) clock_gettime(CLOCK_MONOTONIC, &t0), clock_gettime(CLOCK_PROCESS_CPUTIME_ID, &c0);
    ghosts(u, W, H);
    if (edge) step_edge(u, v, W, H, dt, iK2);
    else step_heat(u, v, W, H, dt);
    float *t = u; u = v; v = t;
  }
  clock_gettime(CLOCK_MONOTONIC, &t1);
  clock_gettime(CLOCK_PROCESS_CPUTIME_ID, &c1);
  double sum = 0;
  for (int y = 1; y <= H; y++) for (int x = 1; x <= W; x++) sum += u[y * pw + x];
  printf("%.6f %.9f %.6f\n", (t1.tv_sec - t0.tv_sec) + (t1.tv_nsec - t0.tv_nsec) * 1e-9, sum / ((double)W * H),
         (c1.tv_sec - c0.tv_sec) + (c1.tv_nsec - c0.tv_nsec) * 1e-9);
  return 0;
}
