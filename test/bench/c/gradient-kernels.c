/*
 * The C reference of the bench's kernel suite: the least-squares and logistic full gradients,
 *   (1/n) sum_s w_s a_s + lambda x,  w_s = a_s . x - b_s  or  sigmoid(a_s . x) - b_s,
 * with each dot product summed in the order of the WebAssembly kernel (eight partial sums by
 * j mod 8, combined as ((s0 + s2) + (s4 + s6)) + ((s1 + s3) + (s5 + s7)), then the tail in
 * order), the rows added one by one, then the scaling by 1/n and the regularizer. Built by the
 * bench with gcc -O3 -march=native and no fast-math, so the compiler keeps that order and the
 * least-squares result has the same bits as roundwire's.
 *
 * usage: gradient-kernels INPUT OUTPUT
 *   INPUT: float64 little-endian: kind (0 least squares, 1 logistic), n, d, lambda,
 *          batchSeconds, batches, then A (n x d, row-major), b (n), x (d)
 *   OUTPUT: the gradient (d float64)
 * stdout: {"wallSecondsPerCall": median, "cpuSecondsPerCall": median}
 */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <time.h>

static double dot8(const double *a, const double *x, long n) {
  double s[8] = {0, 0, 0, 0, 0, 0, 0, 0};
  long blockEnd = n - n % 8, j = 0;
  for (; j < blockEnd; j += 8)
    for (int k = 0; k < 8; k++) s[k] += a[j + k] * x[j + k];
  double sum = ((s[0] + s[2]) + (s[4] + s[6])) + ((s[1] + s[3]) + (s[5] + s[7]));
  for (; j < n; j++) sum += a[j] * x[j];
  return sum;
}

static double sigmoid(double z) {
  if (z >= 0) return 1 / (1 + exp(-z));
  double e = exp(z);
  return e / (1 + e);
}

static void gradient(int kind, const double *a, const double *b, const double *x, double lambda,
                     long n, long d, double *out) {
  for (long j = 0; j < d; j++) out[j] = 0;
  for (long s = 0; s < n; s++) {
    const double *row = a + s * d;
    double z = dot8(row, x, d);
    double w = kind == 0 ? z - b[s] : sigmoid(z) - b[s];
    for (long j = 0; j < d; j++) out[j] += w * row[j];
  }
  double inverse = 1.0 / (double)n;
  for (long j = 0; j < d; j++) out[j] *= inverse;
  for (long j = 0; j < d; j++) out[j] += lambda * x[j];
}

static double seconds(clockid_t clock) {
  struct timespec t;
  clock_gettime(clock, &t);
  return (double)t.tv_sec + 1e-9 * (double)t.tv_nsec;
}

static int compare(const void *p, const void *q) {
  double a = *(const double *)p, b = *(const double *)q;
  return (a > b) - (a < b);
}

int main(int argc, char **argv) {
  if (argc != 3) {
    fprintf(stderr, "usage: gradient-kernels INPUT OUTPUT\n");
    return 2;
  }
  FILE *in = fopen(argv[1], "rb");
  double header[6];
  if (!in || fread(header, sizeof(double), 6, in) != 6) {
    fprintf(stderr, "cannot read the header of %s\n", argv[1]);
    return 2;
  }
  int kind = (int)header[0];
  long n = (long)header[1], d = (long)header[2];
  double lambda = header[3], batchSeconds = header[4];
  int batches = (int)header[5];
  double *a = malloc(sizeof(double) * n * d), *b = malloc(sizeof(double) * n);
  double *x = malloc(sizeof(double) * d), *out = malloc(sizeof(double) * d);
  double *wall = malloc(sizeof(double) * batches), *cpu = malloc(sizeof(double) * batches);
  if (fread(a, sizeof(double), n * d, in) != (size_t)(n * d) || fread(b, sizeof(double), n, in) != (size_t)n ||
      fread(x, sizeof(double), d, in) != (size_t)d) {
    fprintf(stderr, "%s is shorter than its header says\n", argv[1]);
    return 2;
  }
  fclose(in);
  long reps = 1;
  for (;;) {
    double t0 = seconds(CLOCK_MONOTONIC);
    for (long r = 0; r < reps; r++) gradient(kind, a, b, x, lambda, n, d, out);
    if (seconds(CLOCK_MONOTONIC) - t0 > batchSeconds || reps > 10000000) break;
    reps *= 2;
  }
  for (int k = 0; k < batches; k++) {
    double w0 = seconds(CLOCK_MONOTONIC), c0 = seconds(CLOCK_PROCESS_CPUTIME_ID);
    for (long r = 0; r < reps; r++) gradient(kind, a, b, x, lambda, n, d, out);
    wall[k] = (seconds(CLOCK_MONOTONIC) - w0) / (double)reps;
    cpu[k] = (seconds(CLOCK_PROCESS_CPUTIME_ID) - c0) / (double)reps;
  }
  qsort(wall, batches, sizeof(double), compare);
  qsort(cpu, batches, sizeof(double), compare);
  FILE *output = fopen(argv[2], "wb");
  if (!output || fwrite(out, sizeof(double), d, output) != (size_t)d) {
    fprintf(stderr, "cannot write %s\n", argv[2]);
    return 1;
  }
  fclose(output);
  printf("{\"wallSecondsPerCall\": %.17g, \"cpuSecondsPerCall\": %.17g}\n", wall[batches / 2],
         cpu[batches / 2]);
  return 0;
}
