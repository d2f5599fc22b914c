#include <stdio.h>
#include <stdint.h>
#include "actindex_edge.h"
int main(void) {
  double x[AXE_INPUTS]; uint64_t c[AXE_WORDS]; int row = 0;
  for (;;) {
    for (int j = 0; j < AXE_INPUTS; j++) if (scanf(" %lf ,", &x[j]) != 1) return 0;
    axe_encode(x, c); double s = axe_score(c);
    printf("%d,%.17g,%s,%.17g\n", row++, s, axe_is_out(c) ? "out" : "in", axe_p_value(s));
  }
}
