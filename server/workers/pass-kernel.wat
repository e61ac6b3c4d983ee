;; The score and Hessian sums of the fused likelihood pass, in WebAssembly with 128-bit SIMD (two doubles per lane pair).
;;
;;   g[j]    += Σ_i s_i x_ij          H[j][m] += Σ_i h_i x_ij x_im   (m ≤ j, the lower triangle)
;;
;; for rows [0, rows) of a row-major matrix X (k doubles per row), where s_i and h_i are the rows' weighted first and
;; second derivatives of the log-likelihood, computed beforehand in JavaScript (likelihood.ts, `linkTermsRange`).
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
;; Regenerate the bytes the server loads (pass-kernel-wasm.ts) with `node scripts/build-pass-kernel.mjs`.
(module
  (memory (import "env" "memory") 1 65536 shared)
  (func (export "accumulate")
    (param $px i32) (param $ps i32) (param $ph i32) (param $rows i32) (param $k i32) (param $kp i32)
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
        (local.set $x2 (i32.add (local.get $x1) (local.get $kb)))
        (local.set $x3 (i32.add (local.get $x2) (local.get $kb)))
        (local.set $x4 (i32.add (local.get $x3) (local.get $kb)))
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
        (local.set $x1 (i32.add (local.get $x4) (local.get $kb)))
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
        (local.set $x1 (i32.add (local.get $x1) (local.get $kb)))
        (local.set $i (i32.add (local.get $i) (i32.const 1)))
        (br $singles)))))
