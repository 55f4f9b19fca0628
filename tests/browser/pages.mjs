// The pages every browser test visits: forms, results with their API twin's query, guides.
export const PAGES = [
  { name: 'home', path: '/', caution: true },
  { name: 'loan-form', path: '/loan' },
  { name: 'loan-result', path: '/loan?principal=250000&annual_rate_percent=7.125&term_months=360', caution: true },
  { name: 'compare-form', path: '/compare' },
  { name: 'compare-result', path: '/compare?principal=278000&annual_rate_percent=6.375&term_months=180,240,360', caution: true },
  { name: 'check-form', path: '/check' },
  { name: 'check-result', path: '/check?principal=250000&annual_rate_percent=6.5&term_months=360&quoted_payment=1580.17&quoted_apr_percent=6.6', caution: true },
  { name: 'savings-form', path: '/savings' },
  { name: 'savings-result', path: '/savings?deposit=250&annual_rate_percent=4.5&term_months=120', caution: true },
  { name: 'about', path: '/about' },
  { name: 'api', path: '/api' },
];
