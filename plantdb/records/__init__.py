"""What clerks do to the record: bundles, splicing rules, imports and exports."""
