;; Dense linear-algebra kernel for Gapwise, hand-written WebAssembly text with 128-bit SIMD (f64x2).
;; scripts/build-wasm.mjs assembles it (wabt) into src/core/generated/linalg-wasm.ts; the driver that
;; splits Cholesky factorisations and triangular solves into calls of `gemm` is src/core/linalg-wasm.ts.
;;
;; Memory: one linear memory, exported, grown by the driver. Bytes [0, 128) are this module's scratch
;; (a 4×4 tile at the matrix edges); the driver places its matrices from byte 1024 on.
;; Addresses are byte offsets; leading dimensions (ld*) and sizes are in doubles. Matrices are row-major.
(module
  (memory (export "memory") 1)

  ;; C[0:mr, 0:nr] -= Σ_p a_p ⊗ b_p for one register tile of 4 rows × 4 columns (8 f64x2 accumulators).
  ;; ap: packed A micro-panel, 4 doubles per step p (rows 0..3 of column p); bp: packed B micro-panel,
  ;; 4 doubles per step (columns 0..3 of row p); both zero-padded past mr / nr. c: address of C[0][0],
  ;; ldc: bytes between rows of C. Full tiles are updated with vector loads and stores; edge tiles go
  ;; through the scratch tile and scalar updates of the entries that exist.
  (func $micro (param $ap i32) (param $bp i32) (param $kc i32) (param $c i32) (param $ldc i32)
               (param $mr i32) (param $nr i32)
    (local $c00 v128) (local $c01 v128) (local $c10 v128) (local $c11 v128)
    (local $c20 v128) (local $c21 v128) (local $c30 v128) (local $c31 v128)
    (local $a v128) (local $b0 v128) (local $b1 v128)
    (local $end i32) (local $r i32) (local $j i32) (local $row i32)
    (local.set $end (i32.add (local.get $ap) (i32.shl (local.get $kc) (i32.const 5))))
    (loop $p
      (local.set $b0 (v128.load (local.get $bp)))
      (local.set $b1 (v128.load offset=16 (local.get $bp)))
      (local.set $a (v128.load64_splat (local.get $ap)))
      (local.set $c00 (f64x2.add (local.get $c00) (f64x2.mul (local.get $a) (local.get $b0))))
      (local.set $c01 (f64x2.add (local.get $c01) (f64x2.mul (local.get $a) (local.get $b1))))
      (local.set $a (v128.load64_splat offset=8 (local.get $ap)))
      (local.set $c10 (f64x2.add (local.get $c10) (f64x2.mul (local.get $a) (local.get $b0))))
      (local.set $c11 (f64x2.add (local.get $c11) (f64x2.mul (local.get $a) (local.get $b1))))
      (local.set $a (v128.load64_splat offset=16 (local.get $ap)))
      (local.set $c20 (f64x2.add (local.get $c20) (f64x2.mul (local.get $a) (local.get $b0))))
      (local.set $c21 (f64x2.add (local.get $c21) (f64x2.mul (local.get $a) (local.get $b1))))
      (local.set $a (v128.load64_splat offset=24 (local.get $ap)))
      (local.set $c30 (f64x2.add (local.get $c30) (f64x2.mul (local.get $a) (local.get $b0))))
      (local.set $c31 (f64x2.add (local.get $c31) (f64x2.mul (local.get $a) (local.get $b1))))
      (local.set $ap (i32.add (local.get $ap) (i32.const 32)))
      (local.set $bp (i32.add (local.get $bp) (i32.const 32)))
      (br_if $p (i32.lt_u (local.get $ap) (local.get $end))))
    (if (i32.and (i32.eq (local.get $mr) (i32.const 4)) (i32.eq (local.get $nr) (i32.const 4)))
      (then
        (local.set $row (local.get $c))
        (v128.store (local.get $row) (f64x2.sub (v128.load (local.get $row)) (local.get $c00)))
        (v128.store offset=16 (local.get $row) (f64x2.sub (v128.load offset=16 (local.get $row)) (local.get $c01)))
        (local.set $row (i32.add (local.get $row) (local.get $ldc)))
        (v128.store (local.get $row) (f64x2.sub (v128.load (local.get $row)) (local.get $c10)))
        (v128.store offset=16 (local.get $row) (f64x2.sub (v128.load offset=16 (local.get $row)) (local.get $c11)))
        (local.set $row (i32.add (local.get $row) (local.get $ldc)))
        (v128.store (local.get $row) (f64x2.sub (v128.load (local.get $row)) (local.get $c20)))
        (v128.store offset=16 (local.get $row) (f64x2.sub (v128.load offset=16 (local.get $row)) (local.get $c21)))
        (local.set $row (i32.add (local.get $row) (local.get $ldc)))
        (v128.store (local.get $row) (f64x2.sub (v128.load (local.get $row)) (local.get $c30)))
        (v128.store offset=16 (local.get $row) (f64x2.sub (v128.load offset=16 (local.get $row)) (local.get $c31)))
        (return)))
    (v128.store offset=0 (i32.const 0) (local.get $c00))
    (v128.store offset=16 (i32.const 0) (local.get $c01))
    (v128.store offset=32 (i32.const 0) (local.get $c10))
    (v128.store offset=48 (i32.const 0) (local.get $c11))
    (v128.store offset=64 (i32.const 0) (local.get $c20))
    (v128.store offset=80 (i32.const 0) (local.get $c21))
    (v128.store offset=96 (i32.const 0) (local.get $c30))
    (v128.store offset=112 (i32.const 0) (local.get $c31))
    (local.set $r (i32.const 0))
    (loop $rows
      (local.set $row (i32.add (local.get $c) (i32.mul (local.get $r) (local.get $ldc))))
      (local.set $j (i32.const 0))
      (loop $cols
        (f64.store
          (i32.add (local.get $row) (i32.shl (local.get $j) (i32.const 3)))
          (f64.sub
            (f64.load (i32.add (local.get $row) (i32.shl (local.get $j) (i32.const 3))))
            (f64.load (i32.shl (i32.add (i32.shl (local.get $r) (i32.const 2)) (local.get $j)) (i32.const 3)))))
        (local.set $j (i32.add (local.get $j) (i32.const 1)))
        (br_if $cols (i32.lt_u (local.get $j) (local.get $nr))))
      (local.set $r (i32.add (local.get $r) (i32.const 1)))
      (br_if $rows (i32.lt_u (local.get $r) (local.get $mr)))))

  ;; Packs op(B)[p0:p0+kc, j0:j0+nc] into micro-panels of 4 columns: dst[(jp·kc + p)·4 + jj], zero past n.
  ;; op(B)[p][j] = B[p][j] when bt = 0, B[j][p] when bt = 1.
  (func $packB (param $B i32) (param $ldb i32) (param $bt i32) (param $p0 i32) (param $j0 i32)
               (param $kc i32) (param $nc i32) (param $n i32) (param $dst i32)
    (local $jp i32) (local $j i32) (local $jj i32) (local $p i32) (local $src i32) (local $d i32)
    (local $stepP i32) (local $full i32)
    (local.set $jp (i32.const 0))
    (loop $panels
      (local.set $j (i32.add (local.get $j0) (i32.shl (local.get $jp) (i32.const 2))))
      (local.set $d (i32.add (local.get $dst) (i32.shl (i32.mul (local.get $jp) (local.get $kc)) (i32.const 5))))
      (local.set $full (i32.le_u (i32.add (local.get $j) (i32.const 4)) (local.get $n)))
      (if (i32.and (local.get $full) (i32.eqz (local.get $bt)))
        (then
          ;; Rows of B are contiguous in j: two vector copies per step.
          (local.set $src (i32.add (local.get $B)
            (i32.shl (i32.add (i32.mul (local.get $p0) (local.get $ldb)) (local.get $j)) (i32.const 3))))
          (local.set $stepP (i32.shl (local.get $ldb) (i32.const 3)))
          (local.set $p (i32.const 0))
          (loop $steps
            (v128.store (local.get $d) (v128.load (local.get $src)))
            (v128.store offset=16 (local.get $d) (v128.load offset=16 (local.get $src)))
            (local.set $src (i32.add (local.get $src) (local.get $stepP)))
            (local.set $d (i32.add (local.get $d) (i32.const 32)))
            (local.set $p (i32.add (local.get $p) (i32.const 1)))
            (br_if $steps (i32.lt_u (local.get $p) (local.get $kc)))))
        (else
          (local.set $jj (i32.const 0))
          (loop $cols
            (if (i32.lt_u (i32.add (local.get $j) (local.get $jj)) (local.get $n))
              (then
                (if (local.get $bt)
                  (then
                    (local.set $src (i32.add (local.get $B) (i32.shl
                      (i32.add (i32.mul (i32.add (local.get $j) (local.get $jj)) (local.get $ldb)) (local.get $p0)) (i32.const 3))))
                    (local.set $stepP (i32.const 8)))
                  (else
                    (local.set $src (i32.add (local.get $B) (i32.shl
                      (i32.add (i32.mul (local.get $p0) (local.get $ldb)) (i32.add (local.get $j) (local.get $jj))) (i32.const 3))))
                    (local.set $stepP (i32.shl (local.get $ldb) (i32.const 3)))))
                (local.set $p (i32.const 0))
                (loop $steps
                  (f64.store
                    (i32.add (local.get $d) (i32.shl (i32.add (i32.shl (local.get $p) (i32.const 2)) (local.get $jj)) (i32.const 3)))
                    (f64.load (local.get $src)))
                  (local.set $src (i32.add (local.get $src) (local.get $stepP)))
                  (local.set $p (i32.add (local.get $p) (i32.const 1)))
                  (br_if $steps (i32.lt_u (local.get $p) (local.get $kc)))))
              (else
                (local.set $p (i32.const 0))
                (loop $zeros
                  (f64.store
                    (i32.add (local.get $d) (i32.shl (i32.add (i32.shl (local.get $p) (i32.const 2)) (local.get $jj)) (i32.const 3)))
                    (f64.const 0))
                  (local.set $p (i32.add (local.get $p) (i32.const 1)))
                  (br_if $zeros (i32.lt_u (local.get $p) (local.get $kc))))))
            (local.set $jj (i32.add (local.get $jj) (i32.const 1)))
            (br_if $cols (i32.lt_u (local.get $jj) (i32.const 4))))))
      (local.set $jp (i32.add (local.get $jp) (i32.const 1)))
      (br_if $panels (i32.lt_u (i32.shl (local.get $jp) (i32.const 2)) (local.get $nc)))))

  ;; Packs op(A)[i0:i0+4, p0:p0+kc] into dst[p·4 + r], zero for rows past m (r ≥ mr).
  ;; op(A)[i][p] = A[i][p] when at = 0, A[p][i] when at = 1.
  (func $packA (param $A i32) (param $lda i32) (param $at i32) (param $i0 i32) (param $p0 i32)
               (param $kc i32) (param $mr i32) (param $dst i32)
    (local $r i32) (local $p i32) (local $src i32) (local $step i32) (local $d i32) (local $end i32)
    (local $x0 v128) (local $x1 v128) (local $x2 v128) (local $x3 v128)
    (if (i32.eq (local.get $mr) (i32.const 4))
      (then
        (if (local.get $at)
          (then
            ;; op(A)[i0..i0+3][p] = A[p][i0..i0+3] is contiguous: two vector copies per step.
            (local.set $src (i32.add (local.get $A) (i32.shl
              (i32.add (i32.mul (local.get $p0) (local.get $lda)) (local.get $i0)) (i32.const 3))))
            (local.set $step (i32.shl (local.get $lda) (i32.const 3)))
            (local.set $d (local.get $dst))
            (local.set $end (i32.add (local.get $dst) (i32.shl (local.get $kc) (i32.const 5))))
            (loop $copy
              (v128.store (local.get $d) (v128.load (local.get $src)))
              (v128.store offset=16 (local.get $d) (v128.load offset=16 (local.get $src)))
              (local.set $src (i32.add (local.get $src) (local.get $step)))
              (local.set $d (i32.add (local.get $d) (i32.const 32)))
              (br_if $copy (i32.lt_u (local.get $d) (local.get $end))))
            (return)))
        ;; Four contiguous rows: two steps at a time, 4 loads and 4 lane shuffles into 4 stores.
        (local.set $src (i32.add (local.get $A) (i32.shl
          (i32.add (i32.mul (local.get $i0) (local.get $lda)) (local.get $p0)) (i32.const 3))))
        (local.set $step (i32.shl (local.get $lda) (i32.const 3)))
        (local.set $d (local.get $dst))
        (local.set $end (i32.add (local.get $dst) (i32.shl (i32.and (local.get $kc) (i32.const -2)) (i32.const 5))))
        (block $pairsDone
          (loop $pairs
            (br_if $pairsDone (i32.ge_u (local.get $d) (local.get $end)))
            (local.set $x0 (v128.load (local.get $src)))
            (local.set $x1 (v128.load (i32.add (local.get $src) (local.get $step))))
            (local.set $x2 (v128.load (i32.add (local.get $src) (i32.shl (local.get $step) (i32.const 1)))))
            (local.set $x3 (v128.load (i32.add (local.get $src) (i32.mul (local.get $step) (i32.const 3)))))
            (v128.store (local.get $d)
              (i8x16.shuffle 0 1 2 3 4 5 6 7 16 17 18 19 20 21 22 23 (local.get $x0) (local.get $x1)))
            (v128.store offset=16 (local.get $d)
              (i8x16.shuffle 0 1 2 3 4 5 6 7 16 17 18 19 20 21 22 23 (local.get $x2) (local.get $x3)))
            (v128.store offset=32 (local.get $d)
              (i8x16.shuffle 8 9 10 11 12 13 14 15 24 25 26 27 28 29 30 31 (local.get $x0) (local.get $x1)))
            (v128.store offset=48 (local.get $d)
              (i8x16.shuffle 8 9 10 11 12 13 14 15 24 25 26 27 28 29 30 31 (local.get $x2) (local.get $x3)))
            (local.set $src (i32.add (local.get $src) (i32.const 16)))
            (local.set $d (i32.add (local.get $d) (i32.const 64)))
            (br $pairs)))
        (if (i32.and (local.get $kc) (i32.const 1))
          (then
            (f64.store (local.get $d) (f64.load (local.get $src)))
            (f64.store offset=8 (local.get $d) (f64.load (i32.add (local.get $src) (local.get $step))))
            (f64.store offset=16 (local.get $d) (f64.load (i32.add (local.get $src) (i32.shl (local.get $step) (i32.const 1)))))
            (f64.store offset=24 (local.get $d) (f64.load (i32.add (local.get $src) (i32.mul (local.get $step) (i32.const 3)))))))
        (return)))
    (local.set $r (i32.const 0))
    (loop $rows
      (if (i32.lt_u (local.get $r) (local.get $mr))
        (then
          (if (local.get $at)
            (then
              (local.set $src (i32.add (local.get $A) (i32.shl
                (i32.add (i32.mul (local.get $p0) (local.get $lda)) (i32.add (local.get $i0) (local.get $r))) (i32.const 3))))
              (local.set $step (i32.shl (local.get $lda) (i32.const 3))))
            (else
              (local.set $src (i32.add (local.get $A) (i32.shl
                (i32.add (i32.mul (i32.add (local.get $i0) (local.get $r)) (local.get $lda)) (local.get $p0)) (i32.const 3))))
              (local.set $step (i32.const 8))))
          (local.set $p (i32.const 0))
          (loop $steps
            (f64.store
              (i32.add (local.get $dst) (i32.shl (i32.add (i32.shl (local.get $p) (i32.const 2)) (local.get $r)) (i32.const 3)))
              (f64.load (local.get $src)))
            (local.set $src (i32.add (local.get $src) (local.get $step)))
            (local.set $p (i32.add (local.get $p) (i32.const 1)))
            (br_if $steps (i32.lt_u (local.get $p) (local.get $kc)))))
        (else
          (local.set $p (i32.const 0))
          (loop $zeros
            (f64.store
              (i32.add (local.get $dst) (i32.shl (i32.add (i32.shl (local.get $p) (i32.const 2)) (local.get $r)) (i32.const 3)))
              (f64.const 0))
            (local.set $p (i32.add (local.get $p) (i32.const 1)))
            (br_if $zeros (i32.lt_u (local.get $p) (local.get $kc))))))
      (local.set $r (i32.add (local.get $r) (i32.const 1)))
      (br_if $rows (i32.lt_u (local.get $r) (i32.const 4)))))

  ;; C[m×n] -= op(A)[m×k] · op(B)[k×n]  (C at byte address C with ldc doubles per row).
  ;; With lower = 1, C is a diagonal block of a symmetric matrix and only tiles touching the lower
  ;; triangle (i ≥ j) are computed; a tile that straddles the diagonal also writes its entries above it.
  ;; pa: 4·kcMax doubles of scratch; pb: kcMax·(ncMax rounded up to 4) doubles of scratch.
  ;; Blocking: depth kcMax along p, width ncMax along j (the packed B block stays in L2), A packed 4 rows
  ;; at a time (stays in L1) and run against every 4-column micro-panel of the packed B block.
  (func (export "gemm") (param $C i32) (param $ldc i32) (param $A i32) (param $lda i32) (param $at i32)
        (param $B i32) (param $ldb i32) (param $bt i32) (param $m i32) (param $n i32) (param $k i32)
        (param $lower i32) (param $pa i32) (param $pb i32) (param $kcMax i32) (param $ncMax i32)
    (local $pc i32) (local $kc i32) (local $jc i32) (local $nc i32) (local $ic i32) (local $mr i32)
    (local $j i32) (local $jp i32) (local $ldcBytes i32) (local $cRow i32)
    (if (i32.or (i32.or (i32.eqz (local.get $m)) (i32.eqz (local.get $n))) (i32.eqz (local.get $k))) (then (return)))
    (local.set $ldcBytes (i32.shl (local.get $ldc) (i32.const 3)))
    (local.set $pc (i32.const 0))
    (loop $depth
      (local.set $kc (i32.sub (local.get $k) (local.get $pc)))
      (if (i32.gt_u (local.get $kc) (local.get $kcMax)) (then (local.set $kc (local.get $kcMax))))
      (local.set $jc (i32.const 0))
      (block $widthDone
        (loop $width
          (br_if $widthDone (i32.ge_u (local.get $jc) (local.get $n)))
          (br_if $widthDone (i32.and (local.get $lower) (i32.ge_u (local.get $jc) (local.get $m))))
          (local.set $nc (i32.sub (local.get $n) (local.get $jc)))
          (if (i32.gt_u (local.get $nc) (local.get $ncMax)) (then (local.set $nc (local.get $ncMax))))
          (call $packB (local.get $B) (local.get $ldb) (local.get $bt) (local.get $pc) (local.get $jc)
                       (local.get $kc) (local.get $nc) (local.get $n) (local.get $pb))
          ;; Rows above jc lie wholly above the diagonal for every column of this block.
          (local.set $ic (select (i32.and (local.get $jc) (i32.const -4)) (i32.const 0) (local.get $lower)))
          (block $rowsDone
            (loop $rows
              (br_if $rowsDone (i32.ge_u (local.get $ic) (local.get $m)))
              (local.set $mr (i32.sub (local.get $m) (local.get $ic)))
              (if (i32.gt_u (local.get $mr) (i32.const 4)) (then (local.set $mr (i32.const 4))))
              (call $packA (local.get $A) (local.get $lda) (local.get $at) (local.get $ic) (local.get $pc)
                           (local.get $kc) (local.get $mr) (local.get $pa))
              (local.set $cRow (i32.add (local.get $C) (i32.mul (local.get $ic) (local.get $ldcBytes))))
              (local.set $jp (i32.const 0))
              (block $colsDone
                (loop $cols
                  (local.set $j (i32.add (local.get $jc) (i32.shl (local.get $jp) (i32.const 2))))
                  (br_if $colsDone (i32.ge_u (local.get $j) (i32.add (local.get $jc) (local.get $nc))))
                  (br_if $colsDone (i32.and (local.get $lower) (i32.gt_u (local.get $j) (i32.add (local.get $ic) (i32.const 3)))))
                  (call $micro (local.get $pa)
                    (i32.add (local.get $pb) (i32.shl (i32.mul (local.get $jp) (local.get $kc)) (i32.const 5)))
                    (local.get $kc)
                    (i32.add (local.get $cRow) (i32.shl (local.get $j) (i32.const 3)))
                    (local.get $ldcBytes) (local.get $mr)
                    (select (i32.const 4) (i32.sub (local.get $n) (local.get $j))
                      (i32.ge_u (i32.sub (local.get $n) (local.get $j)) (i32.const 4))))
                  (local.set $jp (i32.add (local.get $jp) (i32.const 1)))
                  (br $cols)))
              (local.set $ic (i32.add (local.get $ic) (i32.const 4)))
              (br $rows)))
          (local.set $jc (i32.add (local.get $jc) (local.get $nc)))
          (br $width)))
      (local.set $pc (i32.add (local.get $pc) (local.get $kc)))
      (br_if $depth (i32.lt_u (local.get $pc) (local.get $k)))))

  ;; Row d −= Σ_{t<cnt} coef_t · row(s + t·ld), then row d ·= scale; rows have m doubles.
  ;; d, s, coef: byte addresses; ld, cstride: bytes between source rows and between coefficients.
  ;; Four source rows per pass (5 loads and 1 store per 4 vector multiply-adds), the rest one by one.
  (func (export "rowUpdate") (param $d i32) (param $s i32) (param $ld i32) (param $coef i32)
        (param $cstride i32) (param $cnt i32) (param $m i32) (param $scale f64)
    (local $t i32) (local $j i32) (local $end i32) (local $pairs i32)
    (local $s0 i32) (local $s1 i32) (local $s2 i32) (local $s3 i32)
    (local $k0 v128) (local $k1 v128) (local $k2 v128) (local $k3 v128) (local $acc v128)
    (local $f0 f64) (local $f1 f64) (local $f2 f64) (local $f3 f64) (local $v f64)
    (local.set $pairs (i32.shl (i32.shr_u (local.get $m) (i32.const 1)) (i32.const 4)))
    (local.set $end (i32.shl (local.get $m) (i32.const 3)))
    (local.set $t (i32.const 0))
    (block $quadsDone
      (loop $quads
        (br_if $quadsDone (i32.gt_u (i32.add (local.get $t) (i32.const 4)) (local.get $cnt)))
        (local.set $s0 (i32.add (local.get $s) (i32.mul (local.get $t) (local.get $ld))))
        (local.set $s1 (i32.add (local.get $s0) (local.get $ld)))
        (local.set $s2 (i32.add (local.get $s1) (local.get $ld)))
        (local.set $s3 (i32.add (local.get $s2) (local.get $ld)))
        (local.set $f0 (f64.load (i32.add (local.get $coef) (i32.mul (local.get $t) (local.get $cstride)))))
        (local.set $f1 (f64.load (i32.add (local.get $coef) (i32.mul (i32.add (local.get $t) (i32.const 1)) (local.get $cstride)))))
        (local.set $f2 (f64.load (i32.add (local.get $coef) (i32.mul (i32.add (local.get $t) (i32.const 2)) (local.get $cstride)))))
        (local.set $f3 (f64.load (i32.add (local.get $coef) (i32.mul (i32.add (local.get $t) (i32.const 3)) (local.get $cstride)))))
        (local.set $k0 (f64x2.splat (local.get $f0)))
        (local.set $k1 (f64x2.splat (local.get $f1)))
        (local.set $k2 (f64x2.splat (local.get $f2)))
        (local.set $k3 (f64x2.splat (local.get $f3)))
        (local.set $j (i32.const 0))
        (block $vecDone
          (loop $vec
            (br_if $vecDone (i32.ge_u (local.get $j) (local.get $pairs)))
            (local.set $acc (v128.load (i32.add (local.get $d) (local.get $j))))
            (local.set $acc (f64x2.sub (local.get $acc) (f64x2.mul (local.get $k0) (v128.load (i32.add (local.get $s0) (local.get $j))))))
            (local.set $acc (f64x2.sub (local.get $acc) (f64x2.mul (local.get $k1) (v128.load (i32.add (local.get $s1) (local.get $j))))))
            (local.set $acc (f64x2.sub (local.get $acc) (f64x2.mul (local.get $k2) (v128.load (i32.add (local.get $s2) (local.get $j))))))
            (local.set $acc (f64x2.sub (local.get $acc) (f64x2.mul (local.get $k3) (v128.load (i32.add (local.get $s3) (local.get $j))))))
            (v128.store (i32.add (local.get $d) (local.get $j)) (local.get $acc))
            (local.set $j (i32.add (local.get $j) (i32.const 16)))
            (br $vec)))
        (if (i32.lt_u (local.get $j) (local.get $end))
          (then
            (local.set $v (f64.load (i32.add (local.get $d) (local.get $j))))
            (local.set $v (f64.sub (local.get $v) (f64.mul (local.get $f0) (f64.load (i32.add (local.get $s0) (local.get $j))))))
            (local.set $v (f64.sub (local.get $v) (f64.mul (local.get $f1) (f64.load (i32.add (local.get $s1) (local.get $j))))))
            (local.set $v (f64.sub (local.get $v) (f64.mul (local.get $f2) (f64.load (i32.add (local.get $s2) (local.get $j))))))
            (local.set $v (f64.sub (local.get $v) (f64.mul (local.get $f3) (f64.load (i32.add (local.get $s3) (local.get $j))))))
            (f64.store (i32.add (local.get $d) (local.get $j)) (local.get $v))))
        (local.set $t (i32.add (local.get $t) (i32.const 4)))
        (br $quads)))
    (block $singlesDone
      (loop $singles
        (br_if $singlesDone (i32.ge_u (local.get $t) (local.get $cnt)))
        (local.set $s0 (i32.add (local.get $s) (i32.mul (local.get $t) (local.get $ld))))
        (local.set $f0 (f64.load (i32.add (local.get $coef) (i32.mul (local.get $t) (local.get $cstride)))))
        (local.set $k0 (f64x2.splat (local.get $f0)))
        (local.set $j (i32.const 0))
        (block $vecDone
          (loop $vec
            (br_if $vecDone (i32.ge_u (local.get $j) (local.get $pairs)))
            (v128.store (i32.add (local.get $d) (local.get $j))
              (f64x2.sub (v128.load (i32.add (local.get $d) (local.get $j)))
                (f64x2.mul (local.get $k0) (v128.load (i32.add (local.get $s0) (local.get $j))))))
            (local.set $j (i32.add (local.get $j) (i32.const 16)))
            (br $vec)))
        (if (i32.lt_u (local.get $j) (local.get $end))
          (then
            (f64.store (i32.add (local.get $d) (local.get $j))
              (f64.sub (f64.load (i32.add (local.get $d) (local.get $j)))
                (f64.mul (local.get $f0) (f64.load (i32.add (local.get $s0) (local.get $j))))))))
        (local.set $t (i32.add (local.get $t) (i32.const 1)))
        (br $singles)))
    (local.set $k0 (f64x2.splat (local.get $scale)))
    (local.set $j (i32.const 0))
    (block $vecDone
      (loop $vec
        (br_if $vecDone (i32.ge_u (local.get $j) (local.get $pairs)))
        (v128.store (i32.add (local.get $d) (local.get $j))
          (f64x2.mul (v128.load (i32.add (local.get $d) (local.get $j))) (local.get $k0)))
        (local.set $j (i32.add (local.get $j) (i32.const 16)))
        (br $vec)))
    (if (i32.lt_u (local.get $j) (local.get $end))
      (then
        (f64.store (i32.add (local.get $d) (local.get $j))
          (f64.mul (f64.load (i32.add (local.get $d) (local.get $j))) (local.get $scale))))))

  ;; X·Lᵀ = B for the m×k block B at b (row stride ldb bytes), overwritten by X; L the k×k lower block
  ;; at l (row stride ldl bytes). Row by row of B: x_j = (b_j − Σ_{p<j} x_p·L[j][p]) / L[j][j], the sums
  ;; as f64x2 dot products along the contiguous rows.
  (func (export "trsmRightLeaf") (param $l i32) (param $ldl i32) (param $b i32) (param $ldb i32)
        (param $m i32) (param $k i32)
    (local $i i32) (local $j i32) (local $p i32) (local $row i32) (local $lj i32) (local $pairs i32)
    (local $acc v128) (local $s f64)
    (local.set $i (i32.const 0))
    (block $rowsDone
      (loop $rows
        (br_if $rowsDone (i32.ge_u (local.get $i) (local.get $m)))
        (local.set $row (i32.add (local.get $b) (i32.mul (local.get $i) (local.get $ldb))))
        (local.set $j (i32.const 0))
        (block $colsDone
          (loop $cols
            (br_if $colsDone (i32.ge_u (local.get $j) (local.get $k)))
            (local.set $lj (i32.add (local.get $l) (i32.mul (local.get $j) (local.get $ldl))))
            (local.set $acc (v128.const f64x2 0 0))
            (local.set $pairs (i32.shl (i32.shr_u (local.get $j) (i32.const 1)) (i32.const 4)))
            (local.set $p (i32.const 0))
            (block $dotDone
              (loop $dot
                (br_if $dotDone (i32.ge_u (local.get $p) (local.get $pairs)))
                (local.set $acc (f64x2.add (local.get $acc)
                  (f64x2.mul (v128.load (i32.add (local.get $row) (local.get $p)))
                             (v128.load (i32.add (local.get $lj) (local.get $p))))))
                (local.set $p (i32.add (local.get $p) (i32.const 16)))
                (br $dot)))
            (local.set $s (f64.sub (f64.load (i32.add (local.get $row) (i32.shl (local.get $j) (i32.const 3))))
              (f64.add (f64x2.extract_lane 0 (local.get $acc)) (f64x2.extract_lane 1 (local.get $acc)))))
            (if (i32.and (local.get $j) (i32.const 1))
              (then
                (local.set $s (f64.sub (local.get $s)
                  (f64.mul (f64.load (i32.add (local.get $row) (local.get $pairs)))
                           (f64.load (i32.add (local.get $lj) (local.get $pairs))))))))
            (f64.store (i32.add (local.get $row) (i32.shl (local.get $j) (i32.const 3)))
              (f64.div (local.get $s) (f64.load (i32.add (local.get $lj) (i32.shl (local.get $j) (i32.const 3))))))
            (local.set $j (i32.add (local.get $j) (i32.const 1)))
            (br $cols)))
        (local.set $i (i32.add (local.get $i) (i32.const 1)))
        (br $rows))))

  ;; exp(x) for each lane, x ≤ 0 (the covariance families only need that): x = k·ln 2 + r with
  ;; k = round(x / ln 2), |r| ≤ ln 2 / 2 (ln 2 split in two for an exact product k·ln 2), exp(r) by its
  ;; Taylor series to degree 13 (remainder below 1e-17 relative; Estrin's scheme), 2^k built in the exponent bits.
  ;; Lanes below −708 (where 2^k would leave the normal range) give 0: the exact value is < 1e-307.
  (func $expNonPositive (param $x v128) (result v128)
    (local $k v128) (local $r v128) (local $p v128) (local $scale v128) (local $small v128)
    (local $r2 v128) (local $r4 v128) (local $q0 v128) (local $q1 v128) (local $q2 v128) (local $q3 v128)
    (local $q4 v128) (local $q5 v128) (local $q6 v128)
    (local.set $small (f64x2.lt (local.get $x) (v128.const f64x2 -708 -708)))
    (local.set $x (f64x2.max (local.get $x) (v128.const f64x2 -708 -708)))
    (local.set $k (f64x2.nearest (f64x2.mul (local.get $x) (v128.const f64x2 1.4426950408889634 1.4426950408889634))))
    (local.set $r (f64x2.sub (local.get $x) (f64x2.mul (local.get $k) (v128.const f64x2 0.6931471803691238 0.6931471803691238))))
    (local.set $r (f64x2.sub (local.get $r) (f64x2.mul (local.get $k) (v128.const f64x2 1.9082149292705877e-10 1.9082149292705877e-10))))
    ;; Estrin's scheme (short dependency chains): pairs in r, then r², r⁴, r⁸.
    (local.set $r2 (f64x2.mul (local.get $r) (local.get $r)))
    (local.set $r4 (f64x2.mul (local.get $r2) (local.get $r2)))
    (local.set $q0 (f64x2.add (v128.const f64x2 1 1) (f64x2.mul (v128.const f64x2 1 1) (local.get $r))))
    (local.set $q1 (f64x2.add (v128.const f64x2 0.5 0.5) (f64x2.mul (v128.const f64x2 0.16666666666666666 0.16666666666666666) (local.get $r))))
    (local.set $q2 (f64x2.add (v128.const f64x2 0.041666666666666664 0.041666666666666664) (f64x2.mul (v128.const f64x2 0.008333333333333333 0.008333333333333333) (local.get $r))))
    (local.set $q3 (f64x2.add (v128.const f64x2 0.001388888888888889 0.001388888888888889) (f64x2.mul (v128.const f64x2 0.0001984126984126984 0.0001984126984126984) (local.get $r))))
    (local.set $q4 (f64x2.add (v128.const f64x2 2.48015873015873e-05 2.48015873015873e-05) (f64x2.mul (v128.const f64x2 2.7557319223985893e-06 2.7557319223985893e-06) (local.get $r))))
    (local.set $q5 (f64x2.add (v128.const f64x2 2.755731922398589e-07 2.755731922398589e-07) (f64x2.mul (v128.const f64x2 2.505210838544172e-08 2.505210838544172e-08) (local.get $r))))
    (local.set $q6 (f64x2.add (v128.const f64x2 2.08767569878681e-09 2.08767569878681e-09) (f64x2.mul (v128.const f64x2 1.6059043836821613e-10 1.6059043836821613e-10) (local.get $r))))
    (local.set $q0 (f64x2.add (local.get $q0) (f64x2.mul (local.get $q1) (local.get $r2))))
    (local.set $q2 (f64x2.add (local.get $q2) (f64x2.mul (local.get $q3) (local.get $r2))))
    (local.set $q4 (f64x2.add (local.get $q4) (f64x2.mul (local.get $q5) (local.get $r2))))
    (local.set $q0 (f64x2.add (local.get $q0) (f64x2.mul (local.get $q2) (local.get $r4))))
    (local.set $q4 (f64x2.add (local.get $q4) (f64x2.mul (local.get $q6) (local.get $r4))))
    (local.set $p (f64x2.add (local.get $q0) (f64x2.mul (local.get $q4) (f64x2.mul (local.get $r4) (local.get $r4)))))
    ;; 2^k: k + 1023 + 2^52 holds k + 1023 in its low mantissa bits; shifted by 52 it is the exponent.
    (local.set $scale (i64x2.shl (f64x2.add (local.get $k) (v128.const f64x2 4503599627371519 4503599627371519)) (i32.const 52)))
    (v128.andnot (f64x2.mul (local.get $p) (local.get $scale)) (local.get $small)))

  ;; One covariance structure between points P (pu, pv: n of them) and Q (qu, qv: m of them):
  ;; out[i·m + j] (+)= C(|P_i − Q_j|) for i < n, j < m (overwrites when add = 0). Families (kind):
  ;; 0 exponential sill·e^(−f·h); 1 gaussian sill·e^(−f·h²); 2 Matérn 3/2 sill·(1 + a)·e^(−a);
  ;; 3 Matérn 5/2 sill·(1 + a + a²/3)·e^(−a), a = f·h; 4 spherical sill·(1 − r(1.5 − 0.5r²)) for r = f·h < 1.
  (func (export "covarianceFill") (param $out i32) (param $pu i32) (param $pv i32) (param $n i32)
        (param $qu i32) (param $qv i32) (param $m i32) (param $kind i32) (param $sill f64) (param $f f64)
        (param $add i32)
    (local $i i32) (local $j i32) (local $o i32) (local $pairs i32) (local $end i32)
    (local $u v128) (local $v v128) (local $du v128) (local $dv v128) (local $h2 v128) (local $a v128)
    (local $c v128) (local $sillv v128) (local $fv v128)
    (local.set $sillv (f64x2.splat (local.get $sill)))
    (local.set $fv (f64x2.splat (local.get $f)))
    (local.set $pairs (i32.shl (i32.shr_u (local.get $m) (i32.const 1)) (i32.const 4)))
    (local.set $end (i32.shl (local.get $m) (i32.const 3)))
    (local.set $i (i32.const 0))
    (block $rowsDone
      (loop $rows
        (br_if $rowsDone (i32.ge_u (local.get $i) (local.get $n)))
        (local.set $u (v128.load64_splat (i32.add (local.get $pu) (i32.shl (local.get $i) (i32.const 3)))))
        (local.set $v (v128.load64_splat (i32.add (local.get $pv) (i32.shl (local.get $i) (i32.const 3)))))
        (local.set $o (i32.add (local.get $out) (i32.mul (local.get $i) (local.get $end))))
        (local.set $j (i32.const 0))
        (block $colsDone
          (loop $cols
            (br_if $colsDone (i32.ge_u (local.get $j) (local.get $end)))
            (if (i32.lt_u (local.get $j) (local.get $pairs))
              (then
                (local.set $du (f64x2.sub (local.get $u) (v128.load (i32.add (local.get $qu) (local.get $j)))))
                (local.set $dv (f64x2.sub (local.get $v) (v128.load (i32.add (local.get $qv) (local.get $j))))))
              (else
                ;; The last column of an odd m: the same arithmetic on a half-filled vector.
                (local.set $du (f64x2.sub (local.get $u) (v128.load64_zero (i32.add (local.get $qu) (local.get $j)))))
                (local.set $dv (f64x2.sub (local.get $v) (v128.load64_zero (i32.add (local.get $qv) (local.get $j)))))))
            (local.set $h2 (f64x2.add (f64x2.mul (local.get $du) (local.get $du)) (f64x2.mul (local.get $dv) (local.get $dv))))
            (block $done
              (if (i32.eq (local.get $kind) (i32.const 1))
                (then
                  (local.set $c (f64x2.mul (local.get $sillv)
                    (call $expNonPositive (f64x2.neg (f64x2.mul (local.get $fv) (local.get $h2))))))
                  (br $done)))
              (local.set $a (f64x2.mul (local.get $fv) (f64x2.sqrt (local.get $h2))))
              (if (i32.eq (local.get $kind) (i32.const 4))
                (then
                  (local.set $c (v128.and
                    (f64x2.mul (local.get $sillv)
                      (f64x2.sub (v128.const f64x2 1 1)
                        (f64x2.mul (local.get $a)
                          (f64x2.sub (v128.const f64x2 1.5 1.5)
                            (f64x2.mul (v128.const f64x2 0.5 0.5) (f64x2.mul (local.get $a) (local.get $a)))))))
                    (f64x2.lt (local.get $a) (v128.const f64x2 1 1))))
                  (br $done)))
              (local.set $c (f64x2.mul (local.get $sillv) (call $expNonPositive (f64x2.neg (local.get $a)))))
              (if (i32.eq (local.get $kind) (i32.const 2))
                (then (local.set $c (f64x2.mul (local.get $c) (f64x2.add (v128.const f64x2 1 1) (local.get $a))))))
              (if (i32.eq (local.get $kind) (i32.const 3))
                (then (local.set $c (f64x2.mul (local.get $c)
                  (f64x2.add (f64x2.add (v128.const f64x2 1 1) (local.get $a))
                    (f64x2.div (f64x2.mul (local.get $a) (local.get $a)) (v128.const f64x2 3 3))))))))
            (if (i32.lt_u (local.get $j) (local.get $pairs))
              (then
                (if (local.get $add)
                  (then (local.set $c (f64x2.add (local.get $c) (v128.load (i32.add (local.get $o) (local.get $j)))))))
                (v128.store (i32.add (local.get $o) (local.get $j)) (local.get $c)))
              (else
                (if (local.get $add)
                  (then (local.set $c (f64x2.add (local.get $c) (v128.load64_zero (i32.add (local.get $o) (local.get $j)))))))
                (v128.store64_lane 0 (i32.add (local.get $o) (local.get $j)) (local.get $c))))
            (local.set $j (i32.add (local.get $j) (i32.const 16)))
            (br $cols)))
        (local.set $i (i32.add (local.get $i) (i32.const 1)))
        (br $rows))))
)
