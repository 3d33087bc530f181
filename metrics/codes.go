package metrics

// Diagnostic codes. They are stable and append-only: tools and tests may
// match on them. Each comment shows a small input that produces the code.
const (
	// CodeSyntax: the file is not valid TOML.
	//   metrics.orders = [
	CodeSyntax = "toml-syntax"
	// CodeUnknownKey: a key the spec format does not define.
	//   [metrics.orders]
	//   windwo = ["0d", "14d"]
	CodeUnknownKey = "unknown-key"
	// CodeMissingKey: a required key is absent.
	//   [experiment]   # no hypothesis
	CodeMissingKey = "missing-key"
	// CodeType: a value has the wrong TOML type.
	//   confidence = "95%"
	CodeType = "wrong-type"
	// CodeValue: a value is of the right type but not allowed.
	//   role = "main"
	CodeValue = "bad-value"
	// CodeDuplicate: a name is declared twice.
	//   columns = ["id", "id"]
	CodeDuplicate = "duplicate"
	// CodeWeights: a planned allocation weight that is not positive (also the
	// code of the note that reads weights not summing to 1 as ratios).
	//   [variants]
	//   control = 0.5
	//   shelf = -0.5
	CodeWeights = "weights"
	// CodeVariants: fewer than two variants.
	//   [variants]
	//   control = 1.0
	CodeVariants = "variants"
	// CodePrimary: not exactly one primary metric.
	//   two metrics with role = "primary"
	CodePrimary = "primary-metric"
	// CodeUndefined: a reference to a source that is not declared.
	//   source = "ordrs"
	CodeUndefined = "undefined-source"
	// CodeColumn: a column that the source does not declare.
	//   value = "amout"
	CodeColumn = "unknown-column"
	// CodeWindow: a window whose end is not after its start.
	//   window = ["14d", "0d"]
	CodeWindow = "window"
	// CodeAfterTrigger: an eligibility rule or covariate reads data after the
	// trigger, or an outcome window starts before it.
	//   window = ["-60d", "1d"]   # in an eligibility rule
	CodeAfterTrigger = "after-trigger"
	// CodeExpr: an expression is not valid or not allowed.
	//   filter = "amount > (SELECT 1)"
	CodeExpr = "expression"
	// CodeTime: an invalid timestamp, time range or time zone.
	//   end = 2026-01-01T00:00:00Z   # before start
	CodeTime = "time"
	// CodeDuration: an offset that cannot be read.
	//   window = ["0", "two weeks"]
	CodeDuration = "duration"
	// CodeSource: a source declaration that is incomplete or inconsistent.
	//   [sources.orders]   # neither table nor file
	CodeSource = "source"
	// CodeIdent: an identifier that cannot be used (empty, control characters).
	//   table = ""
	CodeIdent = "identifier"
	// CodeGuard: guard settings missing, or set on a metric that is not a guard.
	//   role = "guard"   # no harmful = "increase"|"decrease"
	CodeGuard = "guard"
	// CodeCap: an invalid winsorising cap.
	//   cap_quantile = 1.5
	CodeCap = "cap"
	// CodeUndefinedMetric: a reference to a metric that is not declared.
	//   covariate = { metric = "ordrs_14d", window = ["-28d", "0d"] }
	CodeUndefinedMetric = "undefined-metric"
	// CodeEncoding: the file is not valid UTF-8 text.
	CodeEncoding = "encoding"
	// CodeRollout: a rollout step out of order, outside the analysis
	// period, or with weights that do not name every variant once.
	//   [rollout.steps.wide]
	//   start = 2026-02-01T00:00:00Z   # before the analysis start
	CodeRollout = "rollout"
	// CodePriorRun: a prior run whose period is empty, starts at or after
	// the analysis start, or reads a source without a time column.
	//   [prior_runs.first]
	//   from = 2026-06-01T00:00:00Z   # after this run's start
	CodePriorRun = "prior-run"
	// CodeCalendar: a calendar event that ends before it starts, or a
	// shared calendar file that cannot be read.
	//   [calendar.events.sale]
	//   from = 2026-03-20
	//   until = 2026-03-20
	CodeCalendar = "calendar"
)
