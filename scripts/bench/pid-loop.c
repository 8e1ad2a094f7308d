/*
 * Reference loop for the control-engine benchmark: an FOPDT plant K e^(-theta s)/(tau s + 1)
 * discretised exactly (zero-order hold) with a whole-sample dead-time delay line, under the
 * engine's discrete PID (derivative on measurement with a first-order filter, clamping
 * anti-windup, integrator held inside the output range), in the engine's update order.
 *
 * usage: pid-loop K tau theta h kp ki kd N umin umax samples repeats
 * prints: best_seconds final_y sum_of_y
 */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <time.h>

static double now_seconds(void) {
  struct timespec ts;
  clock_gettime(CLOCK_MONOTONIC, &ts);
  return (double)ts.tv_sec + 1e-9 * (double)ts.tv_nsec;
}

/* Same schedule as control-bench.ts: the set point cycles through four values every
 * 20 000 samples and a load step toggles every 50 000, so the loop tracks and saturates.
 * Counters (not k / 20000 % 4) keep the schedule equally cheap in both languages. */
static const double setpoints[4] = {0.0, 1.5, 0.5, 2.2};

static double checksum;
/* The loop metrics the engine's fused loop also keeps (IAE, ISE, ITAE, peak |u|, saturated
 * and held counts), so both sides do the same work per sample. */
static double metrics;

static double run(double K, double tau, double theta, double h, double kp, double ki, double kd,
                  double N, double umin, double umax, long samples) {
  const double a = exp(-h / tau);
  const double b = K * (1.0 - a);
  const long m = lround(theta / h);
  double *line = calloc((size_t)(m + 1), sizeof(double));
  long head = 0;
  const double tf = kd / kp / N;
  const double ad = tf / (tf + h);
  const double bd = kd / (tf + h);
  const double kih = ki * h;
  double x = 0.0, integ = 0.0, d = 0.0, yprev = 0.0, y = 0.0;
  int first = 1;
  int seg = 0, loadOn = 0;
  long segLeft = 20000, loadLeft = 50000;
  double r = setpoints[0], sum = 0.0;
  double iae = 0.0, ise = 0.0, itae = 0.0, peak = 0.0;
  long saturated = 0, held = 0;
  for (long k = 0; k < samples; k++) {
    const double load = loadOn ? 0.1 : 0.0;
    y = x;
    sum += y;
    if (first) { yprev = y; first = 0; }
    const double p = kp * (r - y);
    d = ad * d - bd * (y - yprev);
    yprev = y;
    const double v = p + integ + d;
    double u = v;
    int high = 0, low = 0;
    if (v > umax) { u = umax; high = 1; } else if (v < umin) { u = umin; low = 1; }
    const double e = r - y;
    const double push = ki * e;
    int isHeld = (high && push > 0) || (low && push < 0);
    if (!isHeld) integ += kih * e;
    if (integ > umax) { integ = umax; isHeld = 1; } else if (integ < umin) { integ = umin; isHeld = 1; }
    if (high || low) saturated++;
    if (isHeld) held++;
    const double absU = fabs(u);
    if (absU > peak) peak = absU;
    const double absE = fabs(e);
    iae += absE * h;
    ise += e * e * h;
    itae += (double)k * h * absE * h;
    /* delay line: the input applied now reaches the plant m samples later */
    line[head] = u + load;
    long late = head - m;
    if (late < 0) late += m + 1;
    const double delayed = line[late];
    head = head + 1 == m + 1 ? 0 : head + 1;
    x = a * x + b * delayed;
    if (--segLeft == 0) { segLeft = 20000; seg = (seg + 1) & 3; r = setpoints[seg]; }
    if (--loadLeft == 0) { loadLeft = 50000; loadOn ^= 1; }
  }
  free(line);
  checksum = sum;
  metrics = iae + ise + itae + peak + (double)saturated + (double)held;
  return y;
}

int main(int argc, char **argv) {
  if (argc != 13) {
    fprintf(stderr, "usage: %s K tau theta h kp ki kd N umin umax samples repeats\n", argv[0]);
    return 2;
  }
  double v[10];
  for (int i = 0; i < 10; i++) v[i] = atof(argv[i + 1]);
  const long samples = atol(argv[11]);
  const int repeats = atoi(argv[12]);
  double best = 1e300, y = 0.0;
  for (int i = 0; i < repeats; i++) {
    const double t0 = now_seconds();
    y = run(v[0], v[1], v[2], v[3], v[4], v[5], v[6], v[7], v[8], v[9], samples);
    const double dt = now_seconds() - t0;
    if (dt < best) best = dt;
  }
  printf("%.9f %.17g %.17g %.17g\n", best, y, checksum, metrics);
  return 0;
}
