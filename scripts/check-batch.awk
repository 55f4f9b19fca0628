# NDJSON lines of level-payment loan checks (payment and APR), for load runs:
#   awk -v n=20000 -f scripts/check-batch.awk > batch.ndjson
# Invented loans: principals 50,000 to 499,999, rates 3.0 % to 10.9 % in steps of
# 0.1 (80 rates), terms of 180 and 360 months.
BEGIN {
    for (i = 1; i <= n; i++) {
        principal = 50000 + (i * 7919) % 450000;
        rate = 3 + (i % 80) / 10;
        term = (i % 3 == 0) ? 180 : 360;
        printf "{\"id\":%d,\"job\":\"loan_check\",\"request\":{\"principal\":\"%d\",\"annual_rate_percent\":\"%.1f\",\"term_months\":%d}}\n", i, principal, rate, term;
    }
}
