;; WebAssembly kernels for the two hottest loops of foldstack's fits, compiled to binary.ts by
;; `UPDATE_KERNEL=1 npx vitest run test/kernels.test.ts` (that test fails when the two differ).
;; arena.ts loads them and decides when they may run; each has a TypeScript twin that gives
;; bit-identical results and serves whenever the kernel cannot.
;;
;; acc2 / acc3 — histogram accumulation for the tree core (twin: ../tree/histogram.ts).
;; Memory: bytes [0, 16384) hold the byte address of each column's uint8 codes, bytes
;; [16384, 32768) the byte address of each column's first histogram slot (4096 columns at most);
;; everything else belongs to the caller (codes, gradients, hessians, row order, histograms).
;; For each column block, for i in [start, end): r = order[i], and every column's slot at
;; code[r] gets (grad[r], hess[r]) added as one f64x2 — and, in acc3, 1 added to the row count
;; at slot + 16. Additions happen per slot in row order, exactly as in the TypeScript loops.
;;
;; gram — one row block's share of the logistic Hessian (twin: gram.ts).
(module
  (memory (export "memory") 1)
  ;; slots of two f64: gradient sum, hessian sum
  (func (export "acc2") (param $n i32) (param $order i32) (param $start i32) (param $end i32) (param $grad i32) (param $hess i32)
    (local $k i32) (local $p i32) (local $p0 i32) (local $pe i32) (local $r i32) (local $at i32) (local $v v128)
    (local $x0 i32) (local $b0 i32) (local $x1 i32) (local $b1 i32) (local $x2 i32) (local $b2 i32) (local $x3 i32) (local $b3 i32) (local $x4 i32) (local $b4 i32) (local $x5 i32) (local $b5 i32) (local $x6 i32) (local $b6 i32) (local $x7 i32) (local $b7 i32)
    (local.set $p0 (i32.add (local.get $order) (i32.shl (local.get $start) (i32.const 2))))
    (local.set $pe (i32.add (local.get $order) (i32.shl (local.get $end) (i32.const 2))))
    (block $done8
      (loop $cols8
      (br_if $done8 (i32.gt_u (i32.add (local.get $k) (i32.const 8)) (local.get $n)))
      (local.set $x0 (i32.load offset=0 (i32.shl (local.get $k) (i32.const 2))))
      (local.set $b0 (i32.load offset=16384 (i32.shl (local.get $k) (i32.const 2))))
      (local.set $x1 (i32.load offset=4 (i32.shl (local.get $k) (i32.const 2))))
      (local.set $b1 (i32.load offset=16388 (i32.shl (local.get $k) (i32.const 2))))
      (local.set $x2 (i32.load offset=8 (i32.shl (local.get $k) (i32.const 2))))
      (local.set $b2 (i32.load offset=16392 (i32.shl (local.get $k) (i32.const 2))))
      (local.set $x3 (i32.load offset=12 (i32.shl (local.get $k) (i32.const 2))))
      (local.set $b3 (i32.load offset=16396 (i32.shl (local.get $k) (i32.const 2))))
      (local.set $x4 (i32.load offset=16 (i32.shl (local.get $k) (i32.const 2))))
      (local.set $b4 (i32.load offset=16400 (i32.shl (local.get $k) (i32.const 2))))
      (local.set $x5 (i32.load offset=20 (i32.shl (local.get $k) (i32.const 2))))
      (local.set $b5 (i32.load offset=16404 (i32.shl (local.get $k) (i32.const 2))))
      (local.set $x6 (i32.load offset=24 (i32.shl (local.get $k) (i32.const 2))))
      (local.set $b6 (i32.load offset=16408 (i32.shl (local.get $k) (i32.const 2))))
      (local.set $x7 (i32.load offset=28 (i32.shl (local.get $k) (i32.const 2))))
      (local.set $b7 (i32.load offset=16412 (i32.shl (local.get $k) (i32.const 2))))
      (local.set $p (local.get $p0))
      (if (i32.lt_u (local.get $p) (local.get $pe)) (then
      (loop $rows8
        (local.set $r (i32.load (local.get $p)))
        (local.set $v (v128.load64_lane 1
          (i32.add (local.get $hess) (i32.shl (local.get $r) (i32.const 3)))
          (v128.load64_zero (i32.add (local.get $grad) (i32.shl (local.get $r) (i32.const 3))))))
        (local.set $at (i32.add (local.get $b0) (i32.shl (i32.load8_u (i32.add (local.get $x0) (local.get $r))) (i32.const 4))))
        (v128.store (local.get $at) (f64x2.add (v128.load (local.get $at)) (local.get $v)))
        (local.set $at (i32.add (local.get $b1) (i32.shl (i32.load8_u (i32.add (local.get $x1) (local.get $r))) (i32.const 4))))
        (v128.store (local.get $at) (f64x2.add (v128.load (local.get $at)) (local.get $v)))
        (local.set $at (i32.add (local.get $b2) (i32.shl (i32.load8_u (i32.add (local.get $x2) (local.get $r))) (i32.const 4))))
        (v128.store (local.get $at) (f64x2.add (v128.load (local.get $at)) (local.get $v)))
        (local.set $at (i32.add (local.get $b3) (i32.shl (i32.load8_u (i32.add (local.get $x3) (local.get $r))) (i32.const 4))))
        (v128.store (local.get $at) (f64x2.add (v128.load (local.get $at)) (local.get $v)))
        (local.set $at (i32.add (local.get $b4) (i32.shl (i32.load8_u (i32.add (local.get $x4) (local.get $r))) (i32.const 4))))
        (v128.store (local.get $at) (f64x2.add (v128.load (local.get $at)) (local.get $v)))
        (local.set $at (i32.add (local.get $b5) (i32.shl (i32.load8_u (i32.add (local.get $x5) (local.get $r))) (i32.const 4))))
        (v128.store (local.get $at) (f64x2.add (v128.load (local.get $at)) (local.get $v)))
        (local.set $at (i32.add (local.get $b6) (i32.shl (i32.load8_u (i32.add (local.get $x6) (local.get $r))) (i32.const 4))))
        (v128.store (local.get $at) (f64x2.add (v128.load (local.get $at)) (local.get $v)))
        (local.set $at (i32.add (local.get $b7) (i32.shl (i32.load8_u (i32.add (local.get $x7) (local.get $r))) (i32.const 4))))
        (v128.store (local.get $at) (f64x2.add (v128.load (local.get $at)) (local.get $v)))
        (local.set $p (i32.add (local.get $p) (i32.const 4)))
        (br_if $rows8 (i32.lt_u (local.get $p) (local.get $pe))))))
      (local.set $k (i32.add (local.get $k) (i32.const 8)))
      (br $cols8)))
    (block $done4
      (loop $cols4
      (br_if $done4 (i32.gt_u (i32.add (local.get $k) (i32.const 4)) (local.get $n)))
      (local.set $x0 (i32.load offset=0 (i32.shl (local.get $k) (i32.const 2))))
      (local.set $b0 (i32.load offset=16384 (i32.shl (local.get $k) (i32.const 2))))
      (local.set $x1 (i32.load offset=4 (i32.shl (local.get $k) (i32.const 2))))
      (local.set $b1 (i32.load offset=16388 (i32.shl (local.get $k) (i32.const 2))))
      (local.set $x2 (i32.load offset=8 (i32.shl (local.get $k) (i32.const 2))))
      (local.set $b2 (i32.load offset=16392 (i32.shl (local.get $k) (i32.const 2))))
      (local.set $x3 (i32.load offset=12 (i32.shl (local.get $k) (i32.const 2))))
      (local.set $b3 (i32.load offset=16396 (i32.shl (local.get $k) (i32.const 2))))
      (local.set $p (local.get $p0))
      (if (i32.lt_u (local.get $p) (local.get $pe)) (then
      (loop $rows4
        (local.set $r (i32.load (local.get $p)))
        (local.set $v (v128.load64_lane 1
          (i32.add (local.get $hess) (i32.shl (local.get $r) (i32.const 3)))
          (v128.load64_zero (i32.add (local.get $grad) (i32.shl (local.get $r) (i32.const 3))))))
        (local.set $at (i32.add (local.get $b0) (i32.shl (i32.load8_u (i32.add (local.get $x0) (local.get $r))) (i32.const 4))))
        (v128.store (local.get $at) (f64x2.add (v128.load (local.get $at)) (local.get $v)))
        (local.set $at (i32.add (local.get $b1) (i32.shl (i32.load8_u (i32.add (local.get $x1) (local.get $r))) (i32.const 4))))
        (v128.store (local.get $at) (f64x2.add (v128.load (local.get $at)) (local.get $v)))
        (local.set $at (i32.add (local.get $b2) (i32.shl (i32.load8_u (i32.add (local.get $x2) (local.get $r))) (i32.const 4))))
        (v128.store (local.get $at) (f64x2.add (v128.load (local.get $at)) (local.get $v)))
        (local.set $at (i32.add (local.get $b3) (i32.shl (i32.load8_u (i32.add (local.get $x3) (local.get $r))) (i32.const 4))))
        (v128.store (local.get $at) (f64x2.add (v128.load (local.get $at)) (local.get $v)))
        (local.set $p (i32.add (local.get $p) (i32.const 4)))
        (br_if $rows4 (i32.lt_u (local.get $p) (local.get $pe))))))
      (local.set $k (i32.add (local.get $k) (i32.const 4)))
      (br $cols4)))
    (block $done1
      (loop $cols1
      (br_if $done1 (i32.gt_u (i32.add (local.get $k) (i32.const 1)) (local.get $n)))
      (local.set $x0 (i32.load offset=0 (i32.shl (local.get $k) (i32.const 2))))
      (local.set $b0 (i32.load offset=16384 (i32.shl (local.get $k) (i32.const 2))))
      (local.set $p (local.get $p0))
      (if (i32.lt_u (local.get $p) (local.get $pe)) (then
      (loop $rows1
        (local.set $r (i32.load (local.get $p)))
        (local.set $v (v128.load64_lane 1
          (i32.add (local.get $hess) (i32.shl (local.get $r) (i32.const 3)))
          (v128.load64_zero (i32.add (local.get $grad) (i32.shl (local.get $r) (i32.const 3))))))
        (local.set $at (i32.add (local.get $b0) (i32.shl (i32.load8_u (i32.add (local.get $x0) (local.get $r))) (i32.const 4))))
        (v128.store (local.get $at) (f64x2.add (v128.load (local.get $at)) (local.get $v)))
        (local.set $p (i32.add (local.get $p) (i32.const 4)))
        (br_if $rows1 (i32.lt_u (local.get $p) (local.get $pe))))))
      (local.set $k (i32.add (local.get $k) (i32.const 1)))
      (br $cols1)))
  )
  ;; slots of three f64: gradient sum, hessian sum, row count
  (func (export "acc3") (param $n i32) (param $order i32) (param $start i32) (param $end i32) (param $grad i32) (param $hess i32)
    (local $k i32) (local $p i32) (local $p0 i32) (local $pe i32) (local $r i32) (local $at i32) (local $v v128)
    (local $x0 i32) (local $b0 i32) (local $x1 i32) (local $b1 i32) (local $x2 i32) (local $b2 i32) (local $x3 i32) (local $b3 i32) (local $x4 i32) (local $b4 i32) (local $x5 i32) (local $b5 i32) (local $x6 i32) (local $b6 i32) (local $x7 i32) (local $b7 i32)
    (local.set $p0 (i32.add (local.get $order) (i32.shl (local.get $start) (i32.const 2))))
    (local.set $pe (i32.add (local.get $order) (i32.shl (local.get $end) (i32.const 2))))
    (block $done8
      (loop $cols8
      (br_if $done8 (i32.gt_u (i32.add (local.get $k) (i32.const 8)) (local.get $n)))
      (local.set $x0 (i32.load offset=0 (i32.shl (local.get $k) (i32.const 2))))
      (local.set $b0 (i32.load offset=16384 (i32.shl (local.get $k) (i32.const 2))))
      (local.set $x1 (i32.load offset=4 (i32.shl (local.get $k) (i32.const 2))))
      (local.set $b1 (i32.load offset=16388 (i32.shl (local.get $k) (i32.const 2))))
      (local.set $x2 (i32.load offset=8 (i32.shl (local.get $k) (i32.const 2))))
      (local.set $b2 (i32.load offset=16392 (i32.shl (local.get $k) (i32.const 2))))
      (local.set $x3 (i32.load offset=12 (i32.shl (local.get $k) (i32.const 2))))
      (local.set $b3 (i32.load offset=16396 (i32.shl (local.get $k) (i32.const 2))))
      (local.set $x4 (i32.load offset=16 (i32.shl (local.get $k) (i32.const 2))))
      (local.set $b4 (i32.load offset=16400 (i32.shl (local.get $k) (i32.const 2))))
      (local.set $x5 (i32.load offset=20 (i32.shl (local.get $k) (i32.const 2))))
      (local.set $b5 (i32.load offset=16404 (i32.shl (local.get $k) (i32.const 2))))
      (local.set $x6 (i32.load offset=24 (i32.shl (local.get $k) (i32.const 2))))
      (local.set $b6 (i32.load offset=16408 (i32.shl (local.get $k) (i32.const 2))))
      (local.set $x7 (i32.load offset=28 (i32.shl (local.get $k) (i32.const 2))))
      (local.set $b7 (i32.load offset=16412 (i32.shl (local.get $k) (i32.const 2))))
      (local.set $p (local.get $p0))
      (if (i32.lt_u (local.get $p) (local.get $pe)) (then
      (loop $rows8
        (local.set $r (i32.load (local.get $p)))
        (local.set $v (v128.load64_lane 1
          (i32.add (local.get $hess) (i32.shl (local.get $r) (i32.const 3)))
          (v128.load64_zero (i32.add (local.get $grad) (i32.shl (local.get $r) (i32.const 3))))))
        (local.set $at (i32.add (local.get $b0) (i32.mul (i32.load8_u (i32.add (local.get $x0) (local.get $r))) (i32.const 24))))
        (v128.store (local.get $at) (f64x2.add (v128.load (local.get $at)) (local.get $v)))
        (f64.store offset=16 (local.get $at) (f64.add (f64.load offset=16 (local.get $at)) (f64.const 1)))
        (local.set $at (i32.add (local.get $b1) (i32.mul (i32.load8_u (i32.add (local.get $x1) (local.get $r))) (i32.const 24))))
        (v128.store (local.get $at) (f64x2.add (v128.load (local.get $at)) (local.get $v)))
        (f64.store offset=16 (local.get $at) (f64.add (f64.load offset=16 (local.get $at)) (f64.const 1)))
        (local.set $at (i32.add (local.get $b2) (i32.mul (i32.load8_u (i32.add (local.get $x2) (local.get $r))) (i32.const 24))))
        (v128.store (local.get $at) (f64x2.add (v128.load (local.get $at)) (local.get $v)))
        (f64.store offset=16 (local.get $at) (f64.add (f64.load offset=16 (local.get $at)) (f64.const 1)))
        (local.set $at (i32.add (local.get $b3) (i32.mul (i32.load8_u (i32.add (local.get $x3) (local.get $r))) (i32.const 24))))
        (v128.store (local.get $at) (f64x2.add (v128.load (local.get $at)) (local.get $v)))
        (f64.store offset=16 (local.get $at) (f64.add (f64.load offset=16 (local.get $at)) (f64.const 1)))
        (local.set $at (i32.add (local.get $b4) (i32.mul (i32.load8_u (i32.add (local.get $x4) (local.get $r))) (i32.const 24))))
        (v128.store (local.get $at) (f64x2.add (v128.load (local.get $at)) (local.get $v)))
        (f64.store offset=16 (local.get $at) (f64.add (f64.load offset=16 (local.get $at)) (f64.const 1)))
        (local.set $at (i32.add (local.get $b5) (i32.mul (i32.load8_u (i32.add (local.get $x5) (local.get $r))) (i32.const 24))))
        (v128.store (local.get $at) (f64x2.add (v128.load (local.get $at)) (local.get $v)))
        (f64.store offset=16 (local.get $at) (f64.add (f64.load offset=16 (local.get $at)) (f64.const 1)))
        (local.set $at (i32.add (local.get $b6) (i32.mul (i32.load8_u (i32.add (local.get $x6) (local.get $r))) (i32.const 24))))
        (v128.store (local.get $at) (f64x2.add (v128.load (local.get $at)) (local.get $v)))
        (f64.store offset=16 (local.get $at) (f64.add (f64.load offset=16 (local.get $at)) (f64.const 1)))
        (local.set $at (i32.add (local.get $b7) (i32.mul (i32.load8_u (i32.add (local.get $x7) (local.get $r))) (i32.const 24))))
        (v128.store (local.get $at) (f64x2.add (v128.load (local.get $at)) (local.get $v)))
        (f64.store offset=16 (local.get $at) (f64.add (f64.load offset=16 (local.get $at)) (f64.const 1)))
        (local.set $p (i32.add (local.get $p) (i32.const 4)))
        (br_if $rows8 (i32.lt_u (local.get $p) (local.get $pe))))))
      (local.set $k (i32.add (local.get $k) (i32.const 8)))
      (br $cols8)))
    (block $done4
      (loop $cols4
      (br_if $done4 (i32.gt_u (i32.add (local.get $k) (i32.const 4)) (local.get $n)))
      (local.set $x0 (i32.load offset=0 (i32.shl (local.get $k) (i32.const 2))))
      (local.set $b0 (i32.load offset=16384 (i32.shl (local.get $k) (i32.const 2))))
      (local.set $x1 (i32.load offset=4 (i32.shl (local.get $k) (i32.const 2))))
      (local.set $b1 (i32.load offset=16388 (i32.shl (local.get $k) (i32.const 2))))
      (local.set $x2 (i32.load offset=8 (i32.shl (local.get $k) (i32.const 2))))
      (local.set $b2 (i32.load offset=16392 (i32.shl (local.get $k) (i32.const 2))))
      (local.set $x3 (i32.load offset=12 (i32.shl (local.get $k) (i32.const 2))))
      (local.set $b3 (i32.load offset=16396 (i32.shl (local.get $k) (i32.const 2))))
      (local.set $p (local.get $p0))
      (if (i32.lt_u (local.get $p) (local.get $pe)) (then
      (loop $rows4
        (local.set $r (i32.load (local.get $p)))
        (local.set $v (v128.load64_lane 1
          (i32.add (local.get $hess) (i32.shl (local.get $r) (i32.const 3)))
          (v128.load64_zero (i32.add (local.get $grad) (i32.shl (local.get $r) (i32.const 3))))))
        (local.set $at (i32.add (local.get $b0) (i32.mul (i32.load8_u (i32.add (local.get $x0) (local.get $r))) (i32.const 24))))
        (v128.store (local.get $at) (f64x2.add (v128.load (local.get $at)) (local.get $v)))
        (f64.store offset=16 (local.get $at) (f64.add (f64.load offset=16 (local.get $at)) (f64.const 1)))
        (local.set $at (i32.add (local.get $b1) (i32.mul (i32.load8_u (i32.add (local.get $x1) (local.get $r))) (i32.const 24))))
        (v128.store (local.get $at) (f64x2.add (v128.load (local.get $at)) (local.get $v)))
        (f64.store offset=16 (local.get $at) (f64.add (f64.load offset=16 (local.get $at)) (f64.const 1)))
        (local.set $at (i32.add (local.get $b2) (i32.mul (i32.load8_u (i32.add (local.get $x2) (local.get $r))) (i32.const 24))))
        (v128.store (local.get $at) (f64x2.add (v128.load (local.get $at)) (local.get $v)))
        (f64.store offset=16 (local.get $at) (f64.add (f64.load offset=16 (local.get $at)) (f64.const 1)))
        (local.set $at (i32.add (local.get $b3) (i32.mul (i32.load8_u (i32.add (local.get $x3) (local.get $r))) (i32.const 24))))
        (v128.store (local.get $at) (f64x2.add (v128.load (local.get $at)) (local.get $v)))
        (f64.store offset=16 (local.get $at) (f64.add (f64.load offset=16 (local.get $at)) (f64.const 1)))
        (local.set $p (i32.add (local.get $p) (i32.const 4)))
        (br_if $rows4 (i32.lt_u (local.get $p) (local.get $pe))))))
      (local.set $k (i32.add (local.get $k) (i32.const 4)))
      (br $cols4)))
    (block $done1
      (loop $cols1
      (br_if $done1 (i32.gt_u (i32.add (local.get $k) (i32.const 1)) (local.get $n)))
      (local.set $x0 (i32.load offset=0 (i32.shl (local.get $k) (i32.const 2))))
      (local.set $b0 (i32.load offset=16384 (i32.shl (local.get $k) (i32.const 2))))
      (local.set $p (local.get $p0))
      (if (i32.lt_u (local.get $p) (local.get $pe)) (then
      (loop $rows1
        (local.set $r (i32.load (local.get $p)))
        (local.set $v (v128.load64_lane 1
          (i32.add (local.get $hess) (i32.shl (local.get $r) (i32.const 3)))
          (v128.load64_zero (i32.add (local.get $grad) (i32.shl (local.get $r) (i32.const 3))))))
        (local.set $at (i32.add (local.get $b0) (i32.mul (i32.load8_u (i32.add (local.get $x0) (local.get $r))) (i32.const 24))))
        (v128.store (local.get $at) (f64x2.add (v128.load (local.get $at)) (local.get $v)))
        (f64.store offset=16 (local.get $at) (f64.add (f64.load offset=16 (local.get $at)) (f64.const 1)))
        (local.set $p (i32.add (local.get $p) (i32.const 4)))
        (br_if $rows1 (i32.lt_u (local.get $p) (local.get $pe))))))
      (local.set $k (i32.add (local.get $k) (i32.const 1)))
      (br $cols1)))
  )
  ;; H[a·d + k] += Σ_t SZ[a·B + t] · Z[k·B + t] for 0 <= k <= a < d and t in [0, m), m even (the
  ;; caller pads an odd block with a zero row). Each entry sums even t in lane 0 and odd t in lane 1
  ;; of one f64x2, in t order, and adds lane 0 + lane 1 to H: the order gram.ts follows.
  ;; Z, SZ: d columns of B f64 each (column j at byte j·B·8); H: d×d row-major f64.
  (func (export "gram") (param $Z i32) (param $SZ i32) (param $H i32) (param $d i32) (param $B i32) (param $m i32)
    (local $rb i32) (local $te i32) (local $a i32) (local $k i32) (local $t i32)
    (local $sa i32) (local $sb i32) (local $z0 i32) (local $z1 i32) (local $z2 i32) (local $z3 i32) (local $ha i32) (local $hb i32)
    (local $u v128) (local $v v128) (local $w0 v128) (local $w1 v128) (local $w2 v128) (local $w3 v128)
    (local $a0 v128) (local $a1 v128) (local $a2 v128) (local $a3 v128) (local $b0 v128) (local $b1 v128) (local $b2 v128) (local $b3 v128)
    (local.set $rb (i32.shl (local.get $B) (i32.const 3)))
    (local.set $te (i32.shl (local.get $m) (i32.const 3)))
    ;; rows a and a + 1 together
    (block $pairsDone
      (loop $pairs
        (br_if $pairsDone (i32.ge_u (i32.add (local.get $a) (i32.const 1)) (local.get $d)))
        (local.set $sa (i32.add (local.get $SZ) (i32.mul (local.get $a) (local.get $rb))))
        (local.set $sb (i32.add (local.get $sa) (local.get $rb)))
        (local.set $ha (i32.add (local.get $H) (i32.shl (i32.mul (local.get $a) (local.get $d)) (i32.const 3))))
        (local.set $hb (i32.add (local.get $ha) (i32.shl (local.get $d) (i32.const 3))))
        (local.set $k (i32.const 0))
        ;; four columns k..k+3 <= a at a time
        (block $quadsDone
          (loop $quads
            (br_if $quadsDone (i32.gt_u (i32.add (local.get $k) (i32.const 3)) (local.get $a)))
            (local.set $z0 (i32.add (local.get $Z) (i32.mul (local.get $k) (local.get $rb))))
            (local.set $z1 (i32.add (local.get $z0) (local.get $rb)))
            (local.set $z2 (i32.add (local.get $z1) (local.get $rb)))
            (local.set $z3 (i32.add (local.get $z2) (local.get $rb)))
            (local.set $a0 (v128.const i64x2 0 0)) (local.set $a1 (v128.const i64x2 0 0)) (local.set $a2 (v128.const i64x2 0 0)) (local.set $a3 (v128.const i64x2 0 0))
            (local.set $b0 (v128.const i64x2 0 0)) (local.set $b1 (v128.const i64x2 0 0)) (local.set $b2 (v128.const i64x2 0 0)) (local.set $b3 (v128.const i64x2 0 0))
            (local.set $t (i32.const 0))
            (block $tDone4
              (loop $t4
                (br_if $tDone4 (i32.ge_u (local.get $t) (local.get $te)))
                (local.set $u (v128.load (i32.add (local.get $sa) (local.get $t))))
                (local.set $v (v128.load (i32.add (local.get $sb) (local.get $t))))
                (local.set $w0 (v128.load (i32.add (local.get $z0) (local.get $t))))
                (local.set $w1 (v128.load (i32.add (local.get $z1) (local.get $t))))
                (local.set $w2 (v128.load (i32.add (local.get $z2) (local.get $t))))
                (local.set $w3 (v128.load (i32.add (local.get $z3) (local.get $t))))
                (local.set $a0 (f64x2.add (local.get $a0) (f64x2.mul (local.get $u) (local.get $w0))))
                (local.set $a1 (f64x2.add (local.get $a1) (f64x2.mul (local.get $u) (local.get $w1))))
                (local.set $a2 (f64x2.add (local.get $a2) (f64x2.mul (local.get $u) (local.get $w2))))
                (local.set $a3 (f64x2.add (local.get $a3) (f64x2.mul (local.get $u) (local.get $w3))))
                (local.set $b0 (f64x2.add (local.get $b0) (f64x2.mul (local.get $v) (local.get $w0))))
                (local.set $b1 (f64x2.add (local.get $b1) (f64x2.mul (local.get $v) (local.get $w1))))
                (local.set $b2 (f64x2.add (local.get $b2) (f64x2.mul (local.get $v) (local.get $w2))))
                (local.set $b3 (f64x2.add (local.get $b3) (f64x2.mul (local.get $v) (local.get $w3))))
                (local.set $t (i32.add (local.get $t) (i32.const 16)))
                (br $t4)))
            (local.set $z0 (i32.add (local.get $ha) (i32.shl (local.get $k) (i32.const 3))))
            (local.set $z1 (i32.add (local.get $hb) (i32.shl (local.get $k) (i32.const 3))))
            (f64.store offset=0 (local.get $z0) (f64.add (f64.load offset=0 (local.get $z0)) (f64.add (f64x2.extract_lane 0 (local.get $a0)) (f64x2.extract_lane 1 (local.get $a0)))))
            (f64.store offset=8 (local.get $z0) (f64.add (f64.load offset=8 (local.get $z0)) (f64.add (f64x2.extract_lane 0 (local.get $a1)) (f64x2.extract_lane 1 (local.get $a1)))))
            (f64.store offset=16 (local.get $z0) (f64.add (f64.load offset=16 (local.get $z0)) (f64.add (f64x2.extract_lane 0 (local.get $a2)) (f64x2.extract_lane 1 (local.get $a2)))))
            (f64.store offset=24 (local.get $z0) (f64.add (f64.load offset=24 (local.get $z0)) (f64.add (f64x2.extract_lane 0 (local.get $a3)) (f64x2.extract_lane 1 (local.get $a3)))))
            (f64.store offset=0 (local.get $z1) (f64.add (f64.load offset=0 (local.get $z1)) (f64.add (f64x2.extract_lane 0 (local.get $b0)) (f64x2.extract_lane 1 (local.get $b0)))))
            (f64.store offset=8 (local.get $z1) (f64.add (f64.load offset=8 (local.get $z1)) (f64.add (f64x2.extract_lane 0 (local.get $b1)) (f64x2.extract_lane 1 (local.get $b1)))))
            (f64.store offset=16 (local.get $z1) (f64.add (f64.load offset=16 (local.get $z1)) (f64.add (f64x2.extract_lane 0 (local.get $b2)) (f64x2.extract_lane 1 (local.get $b2)))))
            (f64.store offset=24 (local.get $z1) (f64.add (f64.load offset=24 (local.get $z1)) (f64.add (f64x2.extract_lane 0 (local.get $b3)) (f64x2.extract_lane 1 (local.get $b3)))))
            (local.set $k (i32.add (local.get $k) (i32.const 4)))
            (br $quads)))
        ;; the remaining columns up to a + 1, one at a time (column a + 1 only for row a + 1)
        (block $singlesDone
          (loop $singles
            (br_if $singlesDone (i32.gt_u (local.get $k) (i32.add (local.get $a) (i32.const 1))))
            (local.set $z0 (i32.add (local.get $Z) (i32.mul (local.get $k) (local.get $rb))))
            (local.set $a0 (v128.const i64x2 0 0))
            (local.set $b0 (v128.const i64x2 0 0))
            (local.set $t (i32.const 0))
            (block $tDone1
              (loop $t1
                (br_if $tDone1 (i32.ge_u (local.get $t) (local.get $te)))
                (local.set $w0 (v128.load (i32.add (local.get $z0) (local.get $t))))
                (local.set $a0 (f64x2.add (local.get $a0) (f64x2.mul (v128.load (i32.add (local.get $sa) (local.get $t))) (local.get $w0))))
                (local.set $b0 (f64x2.add (local.get $b0) (f64x2.mul (v128.load (i32.add (local.get $sb) (local.get $t))) (local.get $w0))))
                (local.set $t (i32.add (local.get $t) (i32.const 16)))
                (br $t1)))
            (if (i32.le_u (local.get $k) (local.get $a)) (then
              (local.set $z1 (i32.add (local.get $ha) (i32.shl (local.get $k) (i32.const 3))))
              (f64.store (local.get $z1) (f64.add (f64.load (local.get $z1)) (f64.add (f64x2.extract_lane 0 (local.get $a0)) (f64x2.extract_lane 1 (local.get $a0)))))))
            (local.set $z1 (i32.add (local.get $hb) (i32.shl (local.get $k) (i32.const 3))))
            (f64.store (local.get $z1) (f64.add (f64.load (local.get $z1)) (f64.add (f64x2.extract_lane 0 (local.get $b0)) (f64x2.extract_lane 1 (local.get $b0)))))
            (local.set $k (i32.add (local.get $k) (i32.const 1)))
            (br $singles)))
        (local.set $a (i32.add (local.get $a) (i32.const 2)))
        (br $pairs)))
    ;; an odd last row
    (if (i32.lt_u (local.get $a) (local.get $d)) (then
      (local.set $sa (i32.add (local.get $SZ) (i32.mul (local.get $a) (local.get $rb))))
      (local.set $ha (i32.add (local.get $H) (i32.shl (i32.mul (local.get $a) (local.get $d)) (i32.const 3))))
      (local.set $k (i32.const 0))
      (block $lastDone
        (loop $last
          (br_if $lastDone (i32.gt_u (local.get $k) (local.get $a)))
          (local.set $z0 (i32.add (local.get $Z) (i32.mul (local.get $k) (local.get $rb))))
          (local.set $a0 (v128.const i64x2 0 0))
          (local.set $t (i32.const 0))
          (block $tDoneL
            (loop $tL
              (br_if $tDoneL (i32.ge_u (local.get $t) (local.get $te)))
              (local.set $a0 (f64x2.add (local.get $a0) (f64x2.mul (v128.load (i32.add (local.get $sa) (local.get $t))) (v128.load (i32.add (local.get $z0) (local.get $t))))))
              (local.set $t (i32.add (local.get $t) (i32.const 16)))
              (br $tL)))
          (local.set $z1 (i32.add (local.get $ha) (i32.shl (local.get $k) (i32.const 3))))
          (f64.store (local.get $z1) (f64.add (f64.load (local.get $z1)) (f64.add (f64x2.extract_lane 0 (local.get $a0)) (f64x2.extract_lane 1 (local.get $a0)))))
          (local.set $k (i32.add (local.get $k) (i32.const 1)))
          (br $last)))))
  )
)
