/* frostfit/detect.h - cooling curve to freeze events and freezing points; the
 * stage after import. */
#ifndef FF_DETECT_H
#define FF_DETECT_H

#include <stddef.h>
#include "frostfit/diag.h"
#include "frostfit/solvent.h"

/* How a freezing point is read from one freeze event. */
enum ff_method {
  FF_METHOD_AUTO = 0,    /* the best the data support; see method_reason */
  FF_METHOD_PLATEAU,     /* robust level of the flat part after recalescence */
  FF_METHOD_PEAK,        /* maximum after recalescence (naive reading) */
  FF_METHOD_EXTRAPOLATE, /* freezing branch fitted, taken back to nucleation */
  FF_METHOD_INTERSECT,   /* freezing branch meets the straight liquid line */
  FF_METHOD_BREAK,       /* two straight segments, free breakpoint */
  FF_METHOD_MODEL,       /* energy balance: branch vs frozen fraction, x -> 0 */
  FF_METHOD_COUNT
};

/* "auto", "plateau", "peak", "extrapolate", "intersect", "break", "model" */
const char *ff_method_name(enum ff_method m);
/* Parses one of the names above. Returns 0, or -1 when unknown. */
int ff_method_parse(const char *s, enum ff_method *out);

/* Tuning values; start from FF_DETECT_PARAMS_DEFAULT. */
struct ff_detect_params {
  enum ff_method method;     /* FF_METHOD_AUTO by default */
  double resolution_k;       /* thermometer step; 0 = unknown (guessed) */
  const struct ff_solvent *solvent; /* cp and L for the model; NULL = water */
  double min_supercool_k;    /* smaller rises are not called a nucleation */
  double min_rise_sigma;     /* ... nor rises below this many noise sigmas */
  double max_rise_s;         /* recalescence must climb within this time */
  double min_branch_s;       /* shorter freezing branches are untrusted */
  double max_branch_s;       /* straight/quadratic branch fits use at most */
  double settle_s;           /* skipped after the peak; < 0 = from the data */
  double min_liquid_s;       /* liquid branch needed for the Newton fit */
};
#define FF_DETECT_PARAMS_DEFAULT                                              \
  { .method = FF_METHOD_AUTO, .resolution_k = 0.0, .solvent = NULL,           \
    .min_supercool_k = 0.03, .min_rise_sigma = 8.0, .max_rise_s = 40.0,       \
    .min_branch_s = 60.0, .max_branch_s = 300.0, .settle_s = -1.0,            \
    .min_liquid_s = 40.0 }

/* Quality flags: a bitmask; ff_flag_name / ff_flag_text explain each bit. */
enum ff_flag {
  FF_FLAG_NO_NUCLEATION = 1u << 0, /* no supercooling seen: slope break only */
  FF_FLAG_BRANCH_SHORT = 1u << 1,  /* freezing branch too short to fit */
  FF_FLAG_NOISY = 1u << 2,         /* noise above 20 mK */
  FF_FLAG_BATH_DRIFT = 1u << 3,    /* liquid branch not Newton-like */
  FF_FLAG_LAG_UNSETTLED = 1u << 4, /* probe still settling over the branch */
  FF_FLAG_AT_END = 1u << 5,        /* file ends during the freeze */
  FF_FLAG_LIQUID_SHORT = 1u << 6,  /* too little liquid cooling before it */
  FF_FLAG_FIT_FAILED = 1u << 7,    /* the chosen fit did not converge */
  FF_FLAG_METHODS_DISAGREE = 1u << 8, /* methods differ beyond uncertainty */
  FF_FLAG_PEAK_ONLY = 1u << 9,     /* only the naive maximum was possible */
  FF_FLAG_COARSE = 1u << 10,       /* resolution 50 mK or coarser */
  FF_FLAG_SOLVENT_MISMATCH = 1u << 11 /* branch implies another solvent */
};
#define FF_FLAG_COUNT 12
/* Short key of one flag bit, e.g. "branch_short"; NULL for an unknown bit. */
const char *ff_flag_name(unsigned flag);
/* Plain-words reason for one flag bit; NULL for an unknown bit. */
const char *ff_flag_text(unsigned flag);

/* Liquid-cooling fit. kind 1: Newton, T = bath + (t0 - bath) exp(-(t-t_ref)/tau);
 * kind 2: straight line T = t0 + slope (t - t_ref); 0: none. */
struct ff_liquid_fit {
  int kind;
  double t_ref_s, t0_c, bath_c, tau_s, slope_k_s;
  double start_s, end_s;       /* fitted window */
  double rms_k;                /* residual rms */
  double u_bath_c, u_tau_s;    /* Newton: standard uncertainties */
};

/* Freezing-branch fit: T = c[0] + c[1] (t - t_ref) + c[2] (t - t_ref)^2. */
struct ff_branch_fit {
  int ok;
  int order;                   /* 1 or 2 */
  double t_ref_s, c[3];
  double start_s, end_s;       /* fitted window */
  double rms_k;
};

/* One method's estimate; ok = 0 when it could not be computed (why says).
 * u_k is its standard uncertainty with the resolution term included (when
 * the event's chosen method could be computed). */
struct ff_estimate {
  int ok;
  double value_c, u_k;
  char why[160];
};

/* One freeze event. Plain data, nothing to free. */
struct ff_event {
  unsigned cycle;                  /* 1-based, in time order */
  enum ff_method method;           /* method that gave freezing_point_c */
  char method_reason[320];         /* why auto chose it (or "requested") */
  int trusted;                     /* 0: do not report freezing_point_c */
  char status_reason[320];         /* why not trusted, "" when trusted */
  unsigned flags;                  /* enum ff_flag bits */
  double freezing_point_c;         /* NaN when no method could give one */
  double u_freezing_point_k;       /* standard uncertainty (combined) */
  double u_fit_k, u_noise_k, u_resolution_k, u_method_k; /* its parts */
  double supercooling_k;           /* freezing point minus t_min */
  double nucleation_time_s;        /* where the rise starts */
  double t_min_c;                  /* minimum before nucleation */
  double recalescence_rise_k;      /* peak_c - t_min_c */
  double peak_c, peak_time_s;      /* maximum after recalescence */
  double freezing_branch_slope_k_s;
  double frozen_fraction;          /* at the peak, energy balance */
  double branch_start_s, branch_end_s;
  double start_s, end_s;           /* the event's share of the record */
  double noise_k;                  /* estimated noise sd */
  double resolution_k;             /* used for the rectangular term */
  double break_time_s;             /* break method: fitted breakpoint */
  double model_tf0_c, model_delta_k; /* model: T = tf0 - delta/(1 - x) */
  double model_u_delta_k;          /* standard uncertainty of delta */
  struct ff_liquid_fit liquid;     /* Newton fit (kind 1) when possible */
  struct ff_liquid_fit liquid_line;/* the textbook straight liquid line */
  struct ff_branch_fit branch;
  struct ff_estimate est[FF_METHOD_COUNT]; /* est[FF_METHOD_AUTO] unused */
};

/* Events of one channel. _INIT, filled by ff_detect_run, then _release. */
struct ff_event_list {
  size_t n, cap;
  struct ff_event *v;
};
#define FF_EVENT_LIST_INIT { 0 }
void ff_event_list_release(struct ff_event_list *l);

/*
 * Finds the freeze events in one channel and reads a freezing point from
 * each. t_s (strictly increasing) and temp_c are borrowed n-value arrays with
 * no NaN (compact a channel with ff_dataset_channel_xy). A channel that never
 * freezes (a bath or room probe) gives zero events and FF_OK. Each event
 * says whether it is trusted and why not. Returns FF_OK; FF_EINPUT for NaN,
 * infinite or non-increasing input; FF_EUNTRUSTED when n is too small to
 * analyse at all (fewer than 20 points); FF_EIO when memory runs out.
 * out must arrive empty (_INIT); on failure it is left empty.
 */
int ff_detect_run(const double *t_s, const double *temp_c, size_t n,
                  const struct ff_detect_params *p, struct ff_event_list *out,
                  struct ff_diag *d);

/* Liquid fit (Newton when kind 1, else the line) at time t; NaN if none. */
double ff_event_eval_liquid(const struct ff_event *e, double t_s);
/* The textbook straight liquid line at t; NaN if none. */
double ff_event_eval_liquid_line(const struct ff_event *e, double t_s);
/* Freezing-branch fit at t; NaN if none. */
double ff_event_eval_branch(const struct ff_event *e, double t_s);

#endif /* FF_DETECT_H */
