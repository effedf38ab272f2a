// Package policies holds the written policy by which the gate approves,
// downsizes or refuses a proposed reallocation: the risk limits a move must
// meet, the support guard, the smallest move worth making, what each kind of
// failed evidence does, who may waive which check, the roles that sign and
// the rules that say when each must sign.
//
// A policy is a YAML file (keys below, all snake_case) or one of the presets
// built in (Names lists them: standard, cautious, exploratory). Files are
// decoded strictly (package internal/strictyaml): an unknown key, a duplicate
// key or a wrongly typed value is refused with file:line:column and the key's
// path, and so is a limit that contradicts itself (Parse lists the checks).
//
// Money is in the currency of the plan. "Money moved" by a plan w from the
// status quo c is max(Σ increases, Σ cuts) per week, that is
// ½·Σ|w_k − c_k| + ½·|Σ(w_k − c_k)|; "over the horizon" multiplies a weekly
// figure by the plan's horizon in weeks (the gain of a move is a figure over
// the horizon, README.md "Value of a plan").
//
// Keys (zero value = what an absent key means). The values in the presets
// are rules of thumb: common practice, no source. The structure (a loss
// probability, a quantile floor, a CVaR floor) follows the risk measures'
// definitions (Rockafellar & Uryasev 2002 for CVaR).
//
//	version                    int, required: 1 (format of this file).
//	name                       text; absent: the file name or preset name.
//	description                text; absent: none.
//
//	risk.max_loss_probability  largest acceptable share of draws whose gain is
//	                           below zero; required, in (0, 1).
//	risk.downside_level        quantile level of the downside figure, e.g.
//	                           0.05 for the 5th percentile (Hyndman & Fan type
//	                           8); required, in (0, 0.5).
//	risk.downside_floor        worst acceptable gain at downside_level, money
//	                           over the horizon (e.g. -50000); absent: none.
//	risk.downside_floor_share  the same floor as a share of the money moved over
//	                           the horizon (-0.05: at the downside level the move
//	                           may lose at most 5% of the money it moves);
//	                           absent: none; in [-1, 1]. With both floors given
//	                           both must hold.
//	risk.cvar_level            tail share averaged by the CVaR figure (mean of
//	                           the worst cvar_level of draws); required, in
//	                           (0, 0.5].
//	risk.cvar_floor            worst acceptable CVaR, money over the horizon;
//	                           absent: none.
//	risk.cvar_floor_share      the same as a share of the money moved over the
//	                           horizon; absent: none; in [-1, 1].
//	risk.downside_floor_budget_share, risk.cvar_floor_budget_share
//	                           the floors as shares of the quarter's media
//	                           budget (current weekly spend × horizon weeks):
//	                           -0.005 = at the downside level (or on average
//	                           over the CVaR tail) the move may lose at most
//	                           0.5% of the quarter's media budget. This is the
//	                           unit a finance partner sets; a floor as a share
//	                           of the money moved shrinks with the move and
//	                           refused small, clearly profitable moves. absent:
//	                           none; in [-1, 1]. All floors given must hold.
//	risk.min_expected_gain     smallest acceptable mean gain, money over the
//	                           horizon; absent: none. Above zero it also rules
//	                           out very small steps.
//
//	support.high_multiple      spend above this multiple of the channel's
//	                           highest 4-week average observed is not trusted;
//	                           required, >= 1.
//	support.low_multiple       spend below this multiple of the channel's
//	                           lowest 4-week average observed is not trusted;
//	                           0 (absent): no floor but zero; in [0, 1].
//
//	min_move.per_week          a plan moving less money per week than this
//	                           counts as no move (verdict refuse); 0: none.
//	min_move.share_of_spend    the same as a share of current total weekly
//	                           spend; 0: none. The larger of the two applies.
//
//	evidence.on_fail           what a failed check does unless its family or
//	                           name says otherwise: refuse | hold | cap | warn
//	                           (hold: the affected channel, or every channel for
//	                           a global check, keeps its current spend);
//	                           absent: refuse.
//	evidence.on_warn           the same for a check that warns; absent: warn.
//	evidence.exploration_band  "cap" holds a channel within ± this share of its
//	                           current spend (0.10: ±10%); 0: no change; in
//	                           [0, 1].
//	evidence.false_alarm       {fail, warn}: the rate at which a family of
//	                           tested checks fails (warns) when the fitted
//	                           model is right, e.g. {fail: 0.05, warn: 0.20}.
//	                           A check that tests the model carries a p-value
//	                           (the chance of a metric this bad on a right
//	                           model, measured on panels simulated from the
//	                           fit, or from a known distribution; see package
//	                           validation, rates.go); it fails when the p-value
//	                           is below fail / m, m the number of tested checks
//	                           of its family in the evidence (every channel's
//	                           counts): the Bonferroni allowance for many
//	                           channels at once, so the family as a whole
//	                           fails a right model at most at rate fail.
//	                           Checks without a p-value keep their raw
//	                           thresholds. Absent: {fail: 0.05, warn: 0.20}.
//	evidence.families.F        {on_fail, on_warn, false_alarm} for family F
//	                           (accuracy, recovery, stability, lift,
//	                           reconciliation, identification,
//	                           effectiveness); absent fields inherit the
//	                           defaults above. effectiveness has one check,
//	                           effect/modelled: a channel whose
//	                           effectiveness the evidence names as changed
//	                           but the decision keeps constant.
//
//	                           Evidence acts by scope: a check about one
//	                           channel holds or caps that channel (refuse on a
//	                           channel-scoped check holds the channel); only a
//	                           check about the whole model (accuracy,
//	                           reconciliation) can refuse the decision. Checks
//	                           that measure precision from the same draws as
//	                           the risk limits (basis "precision": ROI spread,
//	                           break-even flips, recovery error and bias, spend
//	                           collinearity) only warn: the risk limits already
//	                           count that uncertainty.
//	evidence.checks.NAME       {on_fail, on_warn} for the check called NAME;
//	                           overrides its family.
//	evidence.waivers.ROLE      {families: [...], checks: [...]}: the checks
//	                           ROLE may waive; absent: nobody may waive.
//
//	roles.ROLE.description     text.
//	roles.ROLE.keys            list of the role's public keys (ed25519, PKIX
//	                           PEM), each pinned by content so the policy's
//	                           SHA-256 covers it: either the PEM text itself,
//	                           or "PATH sha256:FINGERPRINT", a key file
//	                           (relative to the policy file) and the hex
//	                           SHA-256 of its PKIX DER bytes, which the file
//	                           must match when read (`sluice keygen` prints
//	                           it). A path alone is refused: the file could be
//	                           replaced without changing the policy. One key
//	                           may be listed under one role only (separation
//	                           of duties) unless signing.allow_shared_signers
//	                           is true. Absent: none yet (a policy without
//	                           keys cannot be signed).
//
//	signing.allow_unsigned     true: a decision that no sign-off rule requires
//	                           anyone to sign verifies without signatures
//	                           ("no sign-off required"). Absent (false): a
//	                           policy without sign-off rules is refused, and so
//	                           is, at verify time, a record no rule fires for.
//	signing.allow_shared_signers
//	                           true: one key may be listed under several
//	                           roles; absent (false): refused.
//	signing.max_age_days       verify refuses sign-offs made more than this
//	                           many days before it runs; 0 (absent): no limit.
//
//	signoffs[i].name           required, unique: the rule's name, given as the
//	                           reason for the sign-off.
//	signoffs[i].explain        plain words for finance; absent: generated.
//	signoffs[i].roles          required: roles (defined under roles) that must
//	                           sign when the rule fires.
//	signoffs[i].when           exactly one condition, judged on the approved
//	                           plan:
//	  always: true             every decision;
//	  moved_above: X           money moved over the horizon above X;
//	  moved_share_above: S     money moved per week above S × current total
//	                           weekly spend;
//	  change_above: S          some channel changed by more than S × its
//	                           current spend;
//	  cut_below: Z             some channel cut to below Z per week;
//	  cut_below_support: true  some channel cut below its lowest 4-week average
//	                           observed;
//	  any_waiver: true         a waiver was accepted;
//	  verdict_in: [...]        the verdict is one of these (approve, downsize,
//	                           refuse).
package policies
