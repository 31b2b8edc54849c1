"""What the product writes: workbooks, model-derived exports (PMML, SQL), scored files, configs."""
