// Types for parse-prometheus-text-format 1.1.1 (it ships none), as its README documents the output
// (prom2json's shape): every value is the text of the exposition, labels are optional.

declare module 'parse-prometheus-text-format' {
  export interface ParsedSample {
    value?: string;
    labels?: Record<string, string>;
    /** histograms: cumulative count by upper bound (le) */
    buckets?: Record<string, string>;
    count?: string;
    sum?: string;
  }

  export interface ParsedFamily {
    name: string;
    help: string;
    type: 'COUNTER' | 'GAUGE' | 'HISTOGRAM' | 'SUMMARY' | 'UNTYPED';
    metrics: ParsedSample[];
  }

  export default function parsePrometheusTextFormat(text: string): ParsedFamily[];
}
