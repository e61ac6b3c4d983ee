;; The fused likelihood pass's arithmetic in WebAssembly with 128-bit SIMD (two doubles per instruction):
;; `accumulate`, the score and Hessian sums for any link, `probitTerms`, the probit link's per-row terms, and
;; `separationStats`, the column statistics of the separation check.
;;
;; accumulate:
;;   g[j]    += Σ_i s_i x_ij          H[j][m] += Σ_i h_i x_ij x_im   (m ≤ j, the lower triangle)
;;
;; for `rows` rows of a row-major matrix X (k doubles per row), `step` bytes apart (k·8 for consecutive rows; the
;; starting values' subsample takes every s-th row, fit.ts), where s_i and h_i are the rows' weighted first and
;; second derivatives of the log-likelihood, computed beforehand (likelihood.ts, `linkTermsRange`, or `probitTerms` below).
;; Why WebAssembly: this is 66 multiply-adds per row at k = 11 and it was half of every pass; V8 runs the same loop in
;; JavaScript one double at a time, while here each instruction does two cells of H. Measured at 10^6 × 11 on this
;; project's 2-core machine: 12.5 ms against 39–48 ms for the JavaScript loop.
;;
;; The sums are formed in the same order as `evaluateRange` in likelihood.ts (four rows per step, added to each cell as
;; ((a1·x1 + a2·x2) + a3·x3) + a4·x4, then single rows), so the results are the same doubles, bit for bit.
;;
;; Layout (byte addresses in the imported memory): H has `kp` doubles per row, kp = k rounded up to even, because
;; the cells are taken in pairs (m, m + 1): the pair that ends a row of the lower triangle may spill one cell into the
;; upper triangle or the spare column, which the caller ignores. For odd k the last pair of a row of X reads one
;; double past the row, so the caller keeps at least 8 readable bytes after X. v128 loads and stores need no
;; alignment; the caller aligns g and H to 16 bytes anyway.
;;
;; probitTerms (below): measured at 10^6 × 11 on both cores, the whole pass went from 33 to 20 ms with it.
;;
;; Regenerate the bytes the server loads (pass-kernel-wasm.ts) with `node scripts/build-pass-kernel.mjs`.
(module
  (memory (import "env" "memory") 1 65536 shared)
  (func (export "accumulate")
    (param $px i32) (param $step i32) (param $ps i32) (param $ph i32) (param $rows i32) (param $k i32) (param $kp i32)
    (param $pg i32) (param $pH i32)
    (local $i i32) (local $jb i32) (local $mb i32) (local $kb i32) (local $hrow i32) (local $hstep i32) (local $cell i32)
    (local $x1 i32) (local $x2 i32) (local $x3 i32) (local $x4 i32)
    (local $s1 f64) (local $s2 f64) (local $s3 f64) (local $s4 f64)
    (local $h1 f64) (local $h2 f64) (local $h3 f64) (local $h4 f64)
    (local $xj1 f64) (local $xj2 f64) (local $xj3 f64) (local $xj4 f64)
    (local $a1 v128) (local $a2 v128) (local $a3 v128) (local $a4 v128)
    (local.set $kb (i32.shl (local.get $k) (i32.const 3)))
    (local.set $hstep (i32.shl (local.get $kp) (i32.const 3)))
    (local.set $x1 (local.get $px))
    ;; Four rows per step.
    (block $quads_done
      (loop $quads
        (br_if $quads_done (i32.gt_s (i32.add (local.get $i) (i32.const 4)) (local.get $rows)))
        (local.set $x2 (i32.add (local.get $x1) (local.get $step)))
        (local.set $x3 (i32.add (local.get $x2) (local.get $step)))
        (local.set $x4 (i32.add (local.get $x3) (local.get $step)))
        (local.set $cell (i32.shl (local.get $i) (i32.const 3)))
        (local.set $s1 (f64.load offset=0 (i32.add (local.get $ps) (local.get $cell))))
        (local.set $s2 (f64.load offset=8 (i32.add (local.get $ps) (local.get $cell))))
        (local.set $s3 (f64.load offset=16 (i32.add (local.get $ps) (local.get $cell))))
        (local.set $s4 (f64.load offset=24 (i32.add (local.get $ps) (local.get $cell))))
        (local.set $h1 (f64.load offset=0 (i32.add (local.get $ph) (local.get $cell))))
        (local.set $h2 (f64.load offset=8 (i32.add (local.get $ph) (local.get $cell))))
        (local.set $h3 (f64.load offset=16 (i32.add (local.get $ph) (local.get $cell))))
        (local.set $h4 (f64.load offset=24 (i32.add (local.get $ph) (local.get $cell))))
        (local.set $jb (i32.const 0))
        (local.set $hrow (local.get $pH))
        (loop $columns
          (local.set $xj1 (f64.load (i32.add (local.get $x1) (local.get $jb))))
          (local.set $xj2 (f64.load (i32.add (local.get $x2) (local.get $jb))))
          (local.set $xj3 (f64.load (i32.add (local.get $x3) (local.get $jb))))
          (local.set $xj4 (f64.load (i32.add (local.get $x4) (local.get $jb))))
          ;; g[j] += s1·x1 + s2·x2 + s3·x3 + s4·x4
          (local.set $cell (i32.add (local.get $pg) (local.get $jb)))
          (f64.store (local.get $cell)
            (f64.add (f64.load (local.get $cell))
              (f64.add
                (f64.add
                  (f64.add (f64.mul (local.get $s1) (local.get $xj1)) (f64.mul (local.get $s2) (local.get $xj2)))
                  (f64.mul (local.get $s3) (local.get $xj3)))
                (f64.mul (local.get $s4) (local.get $xj4)))))
          (local.set $a1 (f64x2.splat (f64.mul (local.get $h1) (local.get $xj1))))
          (local.set $a2 (f64x2.splat (f64.mul (local.get $h2) (local.get $xj2))))
          (local.set $a3 (f64x2.splat (f64.mul (local.get $h3) (local.get $xj3))))
          (local.set $a4 (f64x2.splat (f64.mul (local.get $h4) (local.get $xj4))))
          ;; H[j][m, m+1] += a1·x1[m, m+1] + a2·x2[m, m+1] + a3·x3[m, m+1] + a4·x4[m, m+1], for m = 0, 2, … ≤ j
          (local.set $mb (i32.const 0))
          (loop $cells
            (local.set $cell (i32.add (local.get $hrow) (local.get $mb)))
            (v128.store (local.get $cell)
              (f64x2.add (v128.load (local.get $cell))
                (f64x2.add
                  (f64x2.add
                    (f64x2.add
                      (f64x2.mul (local.get $a1) (v128.load (i32.add (local.get $x1) (local.get $mb))))
                      (f64x2.mul (local.get $a2) (v128.load (i32.add (local.get $x2) (local.get $mb)))))
                    (f64x2.mul (local.get $a3) (v128.load (i32.add (local.get $x3) (local.get $mb)))))
                  (f64x2.mul (local.get $a4) (v128.load (i32.add (local.get $x4) (local.get $mb)))))))
            (local.set $mb (i32.add (local.get $mb) (i32.const 16)))
            (br_if $cells (i32.le_s (local.get $mb) (local.get $jb))))
          (local.set $hrow (i32.add (local.get $hrow) (local.get $hstep)))
          (local.set $jb (i32.add (local.get $jb) (i32.const 8)))
          (br_if $columns (i32.lt_s (local.get $jb) (local.get $kb))))
        (local.set $x1 (i32.add (local.get $x4) (local.get $step)))
        (local.set $i (i32.add (local.get $i) (i32.const 4)))
        (br $quads)))
    ;; The last rows, one at a time.
    (block $singles_done
      (loop $singles
        (br_if $singles_done (i32.ge_s (local.get $i) (local.get $rows)))
        (local.set $cell (i32.shl (local.get $i) (i32.const 3)))
        (local.set $s1 (f64.load (i32.add (local.get $ps) (local.get $cell))))
        (local.set $h1 (f64.load (i32.add (local.get $ph) (local.get $cell))))
        (local.set $jb (i32.const 0))
        (local.set $hrow (local.get $pH))
        (loop $columns1
          (local.set $xj1 (f64.load (i32.add (local.get $x1) (local.get $jb))))
          (local.set $cell (i32.add (local.get $pg) (local.get $jb)))
          (f64.store (local.get $cell) (f64.add (f64.load (local.get $cell)) (f64.mul (local.get $s1) (local.get $xj1))))
          (local.set $a1 (f64x2.splat (f64.mul (local.get $h1) (local.get $xj1))))
          (local.set $mb (i32.const 0))
          (loop $cells1
            (local.set $cell (i32.add (local.get $hrow) (local.get $mb)))
            (v128.store (local.get $cell)
              (f64x2.add (v128.load (local.get $cell))
                (f64x2.mul (local.get $a1) (v128.load (i32.add (local.get $x1) (local.get $mb))))))
            (local.set $mb (i32.add (local.get $mb) (i32.const 16)))
            (br_if $cells1 (i32.le_s (local.get $mb) (local.get $jb))))
          (local.set $hrow (i32.add (local.get $hrow) (local.get $hstep)))
          (local.set $jb (i32.add (local.get $jb) (i32.const 8)))
          (br_if $columns1 (i32.lt_s (local.get $jb) (local.get $kb))))
        (local.set $x1 (i32.add (local.get $x1) (local.get $step)))
        (local.set $i (i32.add (local.get $i) (i32.const 1)))
        (br $singles))))
  ;; The probit link's terms for `rows` rows of X, `step` bytes apart, two rows per step: writes each row's ℓ = log Φ(q·η) (q = 2y − 1,
  ;; η = x'b) to l, and its weighted dℓ/dη and d²ℓ/dη² to s and h (as `probit.obsTerms` in links.ts defines them).
  ;; Only for |q·η| < 3, where the normal tail is the rational function of normal.ts (`scaledLowerTail`) and exp and
  ;; log need no special cases (exp of (−4.5, 0], log of (0.2, 1.3]); any other row, and the last row of an odd
  ;; count, gets NaN in l and is done by the caller in JavaScript. exp: range reduction by ln 2 and the Taylor
  ;; polynomial of degree 13 (truncation below 1e-17 for |r| ≤ ln 2 / 2); log: the exponent split off and
  ;; 2·atanh((m − 1)/(m + 1)) to degree 23 (truncation below 1e-17 for m in [√½, √2]).
  ;; y and the weights are copied into this memory by the caller (the design keeps them elsewhere); b at pb, with a
  ;; zero after it when k is odd.
  (func (export "probitTerms")
    (param $px i32) (param $step i32) (param $pb i32) (param $k i32) (param $py i32) (param $pw i32) (param $weighted i32)
    (param $ps i32) (param $ph i32) (param $pl i32) (param $rows i32)
    (local $i i32) (local $jb i32) (local $kb i32) (local $x1 i32) (local $x2 i32) (local $cell i32)
    (local $eta v128) (local $q v128) (local $s v128) (local $a v128) (local $ok v128) (local $neg v128)
    (local $r v128) (local $z v128) (local $kf v128) (local $rr v128) (local $e v128) (local $upper v128) (local $w1 v128)
    (local $arg v128) (local $bits v128) (local $m v128) (local $big v128) (local $ex v128) (local $t v128) (local $t2 v128)
    (local $lg v128) (local $ll v128) (local $lambda v128) (local $w v128) (local $d1 v128) (local $d2 v128) (local $bj v128)
    (local.set $kb (i32.shl (local.get $k) (i32.const 3)))
    (local.set $x1 (local.get $px))
    (block $pairs_done
      (loop $pairs
        (br_if $pairs_done (i32.gt_s (i32.add (local.get $i) (i32.const 2)) (local.get $rows)))
        (local.set $x2 (i32.add (local.get $x1) (local.get $step)))
        ;; η of both rows: each row's cells in pairs against b's (b has a 0 after its last cell, for the pair that
        ;; reads one double past a row of odd length), the two lanes added at the end
        (local.set $d1 (v128.const f64x2 0 0))
        (local.set $d2 (v128.const f64x2 0 0))
        (local.set $jb (i32.const 0))
        (loop $dot
          (local.set $bj (v128.load (i32.add (local.get $pb) (local.get $jb))))
          (local.set $d1 (f64x2.add (local.get $d1) (f64x2.mul (v128.load (i32.add (local.get $x1) (local.get $jb))) (local.get $bj))))
          (local.set $d2 (f64x2.add (local.get $d2) (f64x2.mul (v128.load (i32.add (local.get $x2) (local.get $jb))) (local.get $bj))))
          (local.set $jb (i32.add (local.get $jb) (i32.const 16)))
          (br_if $dot (i32.lt_s (local.get $jb) (local.get $kb))))
        (local.set $eta (f64x2.replace_lane 1
          (f64x2.splat (f64.add (f64x2.extract_lane 0 (local.get $d1)) (f64x2.extract_lane 1 (local.get $d1))))
          (f64.add (f64x2.extract_lane 0 (local.get $d2)) (f64x2.extract_lane 1 (local.get $d2)))))
        (local.set $cell (i32.shl (local.get $i) (i32.const 3)))
        ;; q = 2y − 1, s = q·η, a = |s|
        (local.set $q (f64x2.sub (f64x2.add (v128.load (i32.add (local.get $py) (local.get $cell))) (v128.load (i32.add (local.get $py) (local.get $cell)))) (v128.const f64x2 1 1)))
        (local.set $s (f64x2.mul (local.get $q) (local.get $eta)))
        (local.set $a (f64x2.abs (local.get $s)))
        (local.set $ok (f64x2.lt (local.get $a) (v128.const f64x2 3 3)))
        (local.set $neg (f64x2.lt (local.get $s) (v128.const f64x2 0 0)))
        ;; r = R(a), the scaled tail: Φ(−a) = e^(−a²/2)·R(a)
        (local.set $r (f64x2.div (f64x2.add (f64x2.mul (f64x2.add (f64x2.mul (f64x2.add (f64x2.mul (f64x2.add (f64x2.mul (f64x2.add (f64x2.mul (f64x2.add (f64x2.mul (v128.const f64x2 0.0352624965998911 0.0352624965998911) (local.get $a)) (v128.const f64x2 0.700383064443688 0.700383064443688)) (local.get $a)) (v128.const f64x2 6.37396220353165 6.37396220353165)) (local.get $a)) (v128.const f64x2 33.912866078383 33.912866078383)) (local.get $a)) (v128.const f64x2 112.079291497871 112.079291497871)) (local.get $a)) (v128.const f64x2 221.213596169931 221.213596169931)) (local.get $a)) (v128.const f64x2 220.206867912376 220.206867912376)) (f64x2.add (f64x2.mul (f64x2.add (f64x2.mul (f64x2.add (f64x2.mul (f64x2.add (f64x2.mul (f64x2.add (f64x2.mul (f64x2.add (f64x2.mul (f64x2.add (f64x2.mul (v128.const f64x2 0.0883883476483184 0.0883883476483184) (local.get $a)) (v128.const f64x2 1.75566716318264 1.75566716318264)) (local.get $a)) (v128.const f64x2 16.064177579207 16.064177579207)) (local.get $a)) (v128.const f64x2 86.7807322029461 86.7807322029461)) (local.get $a)) (v128.const f64x2 296.564248779674 296.564248779674)) (local.get $a)) (v128.const f64x2 637.333633378831 637.333633378831)) (local.get $a)) (v128.const f64x2 793.826512519948 793.826512519948)) (local.get $a)) (v128.const f64x2 440.413735824752 440.413735824752))))
        ;; e = exp(z), z = −a²/2
        (local.set $z (f64x2.mul (v128.const f64x2 -0.5 -0.5) (f64x2.mul (local.get $a) (local.get $a))))
        (local.set $kf (f64x2.nearest (f64x2.mul (local.get $z) (v128.const f64x2 1.4426950408889634 1.4426950408889634))))
        (local.set $rr (f64x2.sub (f64x2.sub (local.get $z) (f64x2.mul (local.get $kf) (v128.const f64x2 0.6931471803691238 0.6931471803691238)))
          (f64x2.mul (local.get $kf) (v128.const f64x2 1.9082149292705877e-10 1.9082149292705877e-10))))
        (local.set $e (f64x2.mul (f64x2.add (f64x2.mul (f64x2.add (f64x2.mul (f64x2.add (f64x2.mul (f64x2.add (f64x2.mul (f64x2.add (f64x2.mul (f64x2.add (f64x2.mul (f64x2.add (f64x2.mul (f64x2.add (f64x2.mul (f64x2.add (f64x2.mul (f64x2.add (f64x2.mul (f64x2.add (f64x2.mul (f64x2.add (f64x2.mul (f64x2.add (f64x2.mul (v128.const f64x2 1.6059043836821613e-10 1.6059043836821613e-10) (local.get $rr)) (v128.const f64x2 2.08767569878681e-09 2.08767569878681e-09)) (local.get $rr)) (v128.const f64x2 2.505210838544172e-08 2.505210838544172e-08)) (local.get $rr)) (v128.const f64x2 2.755731922398589e-07 2.755731922398589e-07)) (local.get $rr)) (v128.const f64x2 2.7557319223985893e-06 2.7557319223985893e-06)) (local.get $rr)) (v128.const f64x2 2.48015873015873e-05 2.48015873015873e-05)) (local.get $rr)) (v128.const f64x2 0.0001984126984126984 0.0001984126984126984)) (local.get $rr)) (v128.const f64x2 0.001388888888888889 0.001388888888888889)) (local.get $rr)) (v128.const f64x2 0.008333333333333333 0.008333333333333333)) (local.get $rr)) (v128.const f64x2 0.041666666666666664 0.041666666666666664)) (local.get $rr)) (v128.const f64x2 0.16666666666666666 0.16666666666666666)) (local.get $rr)) (v128.const f64x2 0.5 0.5)) (local.get $rr)) (v128.const f64x2 1.0 1.0)) (local.get $rr)) (v128.const f64x2 1.0 1.0))
          (i64x2.shl (i64x2.add (i64x2.extend_low_i32x4_s (i32x4.trunc_sat_f64x2_s_zero (local.get $kf))) (v128.const i64x2 1023 1023)) (i32.const 52))))
        (local.set $upper (f64x2.mul (local.get $e) (local.get $r)))
        (local.set $w1 (f64x2.sub (v128.const f64x2 1 1) (local.get $upper)))
        ;; lg = log(r) where s < 0, log(1 − upper) where s ≥ 0
        (local.set $arg (v128.bitselect (local.get $r) (local.get $w1) (local.get $neg)))
        (local.set $bits (local.get $arg))
        (local.set $m (v128.or (v128.and (local.get $bits) (v128.const i64x2 0x000FFFFFFFFFFFFF 0x000FFFFFFFFFFFFF)) (v128.const i64x2 0x3FF0000000000000 0x3FF0000000000000)))
        (local.set $big (f64x2.gt (local.get $m) (v128.const f64x2 1.4142135623730951 1.4142135623730951)))
        (local.set $m (v128.bitselect (f64x2.mul (local.get $m) (v128.const f64x2 0.5 0.5)) (local.get $m) (local.get $big)))
        (local.set $ex (f64x2.convert_low_i32x4_s (i8x16.shuffle 0 1 2 3 8 9 10 11 0 1 2 3 8 9 10 11
          (i64x2.sub (i64x2.sub (i64x2.shr_u (local.get $bits) (i32.const 52)) (v128.const i64x2 1023 1023)) (local.get $big))
          (local.get $big))))
        (local.set $t (f64x2.div (f64x2.sub (local.get $m) (v128.const f64x2 1 1)) (f64x2.add (local.get $m) (v128.const f64x2 1 1))))
        (local.set $t2 (f64x2.mul (local.get $t) (local.get $t)))
        (local.set $lg (f64x2.add (f64x2.mul (local.get $ex) (v128.const f64x2 0.6931471803691238 0.6931471803691238))
          (f64x2.add (f64x2.mul (local.get $ex) (v128.const f64x2 1.9082149292705877e-10 1.9082149292705877e-10))
            (f64x2.mul (f64x2.add (local.get $t) (local.get $t)) (f64x2.add (f64x2.mul (f64x2.add (f64x2.mul (f64x2.add (f64x2.mul (f64x2.add (f64x2.mul (f64x2.add (f64x2.mul (f64x2.add (f64x2.mul (f64x2.add (f64x2.mul (f64x2.add (f64x2.mul (f64x2.add (f64x2.mul (f64x2.add (f64x2.mul (f64x2.add (f64x2.mul (v128.const f64x2 0.043478260869565216 0.043478260869565216) (local.get $t2)) (v128.const f64x2 0.047619047619047616 0.047619047619047616)) (local.get $t2)) (v128.const f64x2 0.05263157894736842 0.05263157894736842)) (local.get $t2)) (v128.const f64x2 0.058823529411764705 0.058823529411764705)) (local.get $t2)) (v128.const f64x2 0.06666666666666667 0.06666666666666667)) (local.get $t2)) (v128.const f64x2 0.07692307692307693 0.07692307692307693)) (local.get $t2)) (v128.const f64x2 0.09090909090909091 0.09090909090909091)) (local.get $t2)) (v128.const f64x2 0.1111111111111111 0.1111111111111111)) (local.get $t2)) (v128.const f64x2 0.14285714285714285 0.14285714285714285)) (local.get $t2)) (v128.const f64x2 0.2 0.2)) (local.get $t2)) (v128.const f64x2 0.3333333333333333 0.3333333333333333)) (local.get $t2)) (v128.const f64x2 1.0 1.0))))))
        ;; ℓ: z + log r where s < 0; log1p(−upper) = log(w1) − ((w1 − 1) + upper)/w1 where s ≥ 0 (the term corrects
        ;; the rounding of 1 − upper)
        (local.set $ll (v128.bitselect
          (f64x2.add (local.get $z) (local.get $lg))
          (f64x2.sub (local.get $lg) (f64x2.div (f64x2.add (f64x2.sub (local.get $w1) (v128.const f64x2 1 1)) (local.get $upper)) (local.get $w1)))
          (local.get $neg)))
        ;; λ = φ(s)/Φ(s): 1/(√(2π)·r) where s < 0, e/(√(2π)·(1 − upper)) where s ≥ 0
        (local.set $lambda (f64x2.div
          (v128.bitselect (v128.const f64x2 1 1) (f64x2.mul (local.get $e) (v128.const f64x2 0.3989422804014327 0.3989422804014327)) (local.get $neg))
          (v128.bitselect (f64x2.mul (local.get $r) (v128.const f64x2 2.5066282746310002 2.5066282746310002)) (local.get $w1) (local.get $neg))))
        (local.set $w (if (result v128) (local.get $weighted)
          (then (v128.load (i32.add (local.get $pw) (local.get $cell))))
          (else (v128.const f64x2 1 1))))
        (v128.store (i32.add (local.get $ps) (local.get $cell)) (f64x2.mul (local.get $w) (f64x2.mul (local.get $q) (local.get $lambda))))
        (v128.store (i32.add (local.get $ph) (local.get $cell))
          (f64x2.mul (local.get $w) (f64x2.neg (f64x2.mul (local.get $lambda) (f64x2.add (local.get $lambda) (local.get $s))))))
        (v128.store (i32.add (local.get $pl) (local.get $cell)) (v128.bitselect (local.get $ll) (v128.const f64x2 nan nan) (local.get $ok)))
        (local.set $x1 (i32.add (local.get $x2) (local.get $step)))
        (local.set $i (i32.add (local.get $i) (i32.const 2)))
        (br $pairs)))
    ;; The last row of an odd count: left to the caller.
    (if (i32.lt_s (local.get $i) (local.get $rows))
      (then (f64.store (i32.add (local.get $pl) (i32.shl (local.get $i) (i32.const 3))) (f64.const nan)))))

  ;; The separation check's column statistics (separation.ts, `separationStatsRange`) for `rows` consecutive rows of
  ;; X, two columns per instruction, added to the running figures at pst: seven rows of kp doubles, the columns'
  ;; minimum and maximum among ones, minimum and maximum among zeros, sum among ones, sum among zeros, and a flag
  ;; (any bit set) for a value other than 0 and 1. A block of rows is taken one pair of columns at a time, so the
  ;; figures stay in registers. pmin and pmax keep the first of equal values, as the JavaScript's `x < min` does, and
  ;; the sums add the rows in row order, so the figures are the JavaScript's (zeros may differ in sign). The last pair
  ;; of an odd k reads one double past each row (the next row's intercept): its spare column is ignored by the caller.
  (func (export "separationStats")
    (param $px i32) (param $k i32) (param $kp i32) (param $py i32) (param $rows i32) (param $pst i32)
    (local $jb i32) (local $kb i32) (local $row i32) (local $r i32) (local $stat i32) (local $plane i32)
    (local $x v128) (local $one v128) (local $min1 v128) (local $max1 v128) (local $min0 v128) (local $max0 v128)
    (local $sum1 v128) (local $sum0 v128) (local $other v128)
    (local.set $kb (i32.shl (local.get $k) (i32.const 3)))
    (local.set $plane (i32.shl (local.get $kp) (i32.const 3)))
    (local.set $jb (i32.const 0))
    (loop $pairs
      (local.set $stat (i32.add (local.get $pst) (local.get $jb)))
      (local.set $min1 (v128.load (local.get $stat)))
      (local.set $max1 (v128.load (i32.add (local.get $stat) (local.get $plane))))
      (local.set $min0 (v128.load (i32.add (local.get $stat) (i32.mul (local.get $plane) (i32.const 2)))))
      (local.set $max0 (v128.load (i32.add (local.get $stat) (i32.mul (local.get $plane) (i32.const 3)))))
      (local.set $sum1 (v128.load (i32.add (local.get $stat) (i32.mul (local.get $plane) (i32.const 4)))))
      (local.set $sum0 (v128.load (i32.add (local.get $stat) (i32.mul (local.get $plane) (i32.const 5)))))
      (local.set $other (v128.load (i32.add (local.get $stat) (i32.mul (local.get $plane) (i32.const 6)))))
      (local.set $row (i32.add (local.get $px) (local.get $jb)))
      (local.set $r (i32.const 0))
      (block $rows_done
        (loop $rows_loop
          (br_if $rows_done (i32.ge_s (local.get $r) (local.get $rows)))
          (local.set $x (v128.load (local.get $row)))
          (local.set $one (f64x2.eq (f64x2.splat (f64.load (i32.add (local.get $py) (i32.shl (local.get $r) (i32.const 3))))) (v128.const f64x2 1 1)))
          (local.set $min1 (f64x2.pmin (local.get $min1) (v128.bitselect (local.get $x) (v128.const f64x2 inf inf) (local.get $one))))
          (local.set $max1 (f64x2.pmax (local.get $max1) (v128.bitselect (local.get $x) (v128.const f64x2 -inf -inf) (local.get $one))))
          (local.set $min0 (f64x2.pmin (local.get $min0) (v128.bitselect (v128.const f64x2 inf inf) (local.get $x) (local.get $one))))
          (local.set $max0 (f64x2.pmax (local.get $max0) (v128.bitselect (v128.const f64x2 -inf -inf) (local.get $x) (local.get $one))))
          (local.set $sum1 (f64x2.add (local.get $sum1) (v128.and (local.get $x) (local.get $one))))
          (local.set $sum0 (f64x2.add (local.get $sum0) (v128.andnot (local.get $x) (local.get $one))))
          (local.set $other (v128.or (local.get $other)
            (v128.and (f64x2.ne (local.get $x) (v128.const f64x2 0 0)) (f64x2.ne (local.get $x) (v128.const f64x2 1 1)))))
          (local.set $row (i32.add (local.get $row) (local.get $kb)))
          (local.set $r (i32.add (local.get $r) (i32.const 1)))
          (br $rows_loop)))
      (v128.store (local.get $stat) (local.get $min1))
      (v128.store (i32.add (local.get $stat) (local.get $plane)) (local.get $max1))
      (v128.store (i32.add (local.get $stat) (i32.mul (local.get $plane) (i32.const 2))) (local.get $min0))
      (v128.store (i32.add (local.get $stat) (i32.mul (local.get $plane) (i32.const 3))) (local.get $max0))
      (v128.store (i32.add (local.get $stat) (i32.mul (local.get $plane) (i32.const 4))) (local.get $sum1))
      (v128.store (i32.add (local.get $stat) (i32.mul (local.get $plane) (i32.const 5))) (local.get $sum0))
      (v128.store (i32.add (local.get $stat) (i32.mul (local.get $plane) (i32.const 6))) (local.get $other))
      (local.set $jb (i32.add (local.get $jb) (i32.const 16)))
      (br_if $pairs (i32.lt_s (local.get $jb) (local.get $kb)))))
)
