# NDJSON lines of level-payment loan checks (payment and APR), for load runs:
#   awk -v n=20000 -f scripts/check-batch.awk > batch.ndjson
# Invented loans: principals 50,000 to 499,999, rates 3.0 % to 10.9 % in steps of
# 0.1 (80 rates), terms of 180 and 360 months. With -v adjustable=1 each loan
# is adjustable: index 2.00 to 5.95 plus a 2.75 margin, first change at payment
# 61 then yearly, caps 2/2, a maximum 5 points above the initial rate, rounded
# to the nearest eighth (its check is figured on the composite path).
BEGIN {
    for (i = 1; i <= n; i++) {
        principal = 50000 + (i * 7919) % 450000;
        rate = 3 + (i % 80) / 10;
        term = (i % 3 == 0) ? 180 : 360;
        arm = "";
        if (adjustable) {
            arm = sprintf(",\"adjustable\":{\"index_percent\":\"%.2f\",\"margin_percent\":\"2.75\",\"first_change_payment\":61,\"change_every\":12,\"first_change_cap_percent\":\"2\",\"periodic_cap_percent\":\"2\",\"lifetime_max_percent\":\"%.1f\",\"rounding\":\"nearest_eighth\"}", 2 + (i % 80) * 0.05, rate + 5);
        }
        printf "{\"id\":%d,\"job\":\"loan_check\",\"request\":{\"principal\":\"%d\",\"annual_rate_percent\":\"%.1f\",\"term_months\":%d%s}}\n", i, principal, rate, term, arm;
    }
}
