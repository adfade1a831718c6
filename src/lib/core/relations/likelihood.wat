;; The hierarchical fit's per-object sums S_i = sum_k exp(v_ik) (see hierarchical-sum.ts), with
;;   v_ik = c_ik - hs r^2 - ht u^2,  r = R_i + dy_ik - b dx_ik,  u = U_i + dx_ik,
;;   R_i = yc_i - A - b xc_i - cc dz_i,  U_i = xc_i - mu,
;; over objects lo .. hi - 1 and m parameter sets q = 0 .. m - 1, written to acc[i m + q].
;; The draws of an object are read from memory once and then from cache for the other sets.
;; Both functions take the same arguments: lo, hi, m, then byte addresses in the shared memory
;; of theta (f64, m x 6: A, b, hs, ht, mu, cc), off (i32, n + 1 draw offsets, each a multiple
;; of 4), xc, yc, dz (f64, n each), acc (f64, n x m) and dx, dy, c (f32, one per draw; padding
;; draws have c = -infinity and give exactly 0). The arithmetic for one (object, set) does not
;; depend on m.
;;
;; exp(v) for v <= 0 (every v_ik is <= 0: c is relative to each object's largest value):
;; v is clamped below, v = k ln2 / N + q with k = nearest(v N / ln2) and |q| <= ln2 / (2N)
;; (Cody and Waite 1980: ln2 / N split into a high part whose product with k is exact and a
;; low part), e^q by its Taylor polynomial, and 2^(k / N) built from the exponent bits
;; (zero, exactly, where the biased exponent would fall below 1).
;;
;; sums64: float64 in lanes of 2, N = 64 (2^(j/64) from the 64-entry table at byte 0),
;;   Taylor degree 5: truncation q^6 / 720 < 3.5e-17 relative; 0 below v = -708.4.
;; sums32: float32 in lanes of 4 (R_i and U_i computed in float64, then rounded), N = 1,
;;   Taylor degree 6: truncation q^7 / 5040 < 1.3e-7 relative; 0 below v = -87.3; each term
;;   is widened to float64 before it is added.
(module
  (import "env" "memory" (memory 1 65536 shared))

  (func (export "sums64")
    (param $lo i32) (param $hi i32) (param $m i32) (param $pTheta i32)
    (param $pOff i32) (param $pXc i32) (param $pYc i32) (param $pDz i32) (param $pAcc i32)
    (param $pDx i32) (param $pDy i32) (param $pC i32)
    (local $i i32) (local $s i32) (local $th i32) (local $A f64) (local $b f64) (local $hs f64) (local $ht f64) (local $mu f64) (local $cc f64) (local $j i32) (local $j1 i32) (local $xc f64)
    (local $R v128) (local $U v128) (local $B v128) (local $HS v128) (local $HT v128)
    (local $dx v128) (local $r v128) (local $u v128) (local $v v128) (local $kf v128) (local $q v128)
    (local $p v128) (local $ki v128) (local $e v128) (local $tl v128) (local $acc v128)
    (local.set $i (local.get $lo))
    (block $done (loop $obj
      (br_if $done (i32.ge_s (local.get $i) (local.get $hi)))
      (local.set $s (i32.const 0))
      (block $thetas (loop $theta
      (br_if $thetas (i32.ge_u (local.get $s) (local.get $m)))
      (local.set $th (i32.add (local.get $pTheta) (i32.mul (local.get $s) (i32.const 48))))
      (local.set $A (f64.load offset=0 (local.get $th)))
      (local.set $b (f64.load offset=8 (local.get $th)))
      (local.set $hs (f64.load offset=16 (local.get $th)))
      (local.set $ht (f64.load offset=24 (local.get $th)))
      (local.set $mu (f64.load offset=32 (local.get $th)))
      (local.set $cc (f64.load offset=40 (local.get $th)))
      (local.set $B (f64x2.splat (local.get $b)))
      (local.set $HS (f64x2.splat (local.get $hs)))
      (local.set $HT (f64x2.splat (local.get $ht)))
      (local.set $xc (f64.load (i32.add (local.get $pXc) (i32.shl (local.get $i) (i32.const 3)))))
      (local.set $R (f64x2.splat
        (f64.sub
          (f64.sub
            (f64.sub (f64.load (i32.add (local.get $pYc) (i32.shl (local.get $i) (i32.const 3)))) (local.get $A))
            (f64.mul (local.get $b) (local.get $xc)))
          (f64.mul (local.get $cc) (f64.load (i32.add (local.get $pDz) (i32.shl (local.get $i) (i32.const 3))))))))
      (local.set $U (f64x2.splat (f64.sub (local.get $xc) (local.get $mu))))
      (local.set $j (i32.shl (i32.load (i32.add (local.get $pOff) (i32.shl (local.get $i) (i32.const 2)))) (i32.const 2)))
      (local.set $j1 (i32.shl (i32.load (i32.add (local.get $pOff) (i32.shl (i32.add (local.get $i) (i32.const 1)) (i32.const 2)))) (i32.const 2)))
      (local.set $acc (v128.const f64x2 0 0))
      (block $end (loop $draw
        (br_if $end (i32.ge_u (local.get $j) (local.get $j1)))
        (local.set $dx (f64x2.promote_low_f32x4 (v128.load64_zero (i32.add (local.get $pDx) (local.get $j)))))
        (local.set $r (f64x2.sub
          (f64x2.add (local.get $R) (f64x2.promote_low_f32x4 (v128.load64_zero (i32.add (local.get $pDy) (local.get $j)))))
          (f64x2.mul (local.get $B) (local.get $dx))))
        (local.set $u (f64x2.add (local.get $U) (local.get $dx)))
        (local.set $v (f64x2.sub
          (f64x2.promote_low_f32x4 (v128.load64_zero (i32.add (local.get $pC) (local.get $j))))
          (f64x2.add
            (f64x2.mul (local.get $HS) (f64x2.mul (local.get $r) (local.get $r)))
            (f64x2.mul (local.get $HT) (f64x2.mul (local.get $u) (local.get $u))))))
        (local.set $v (f64x2.pmax (local.get $v) (v128.const f64x2 -745 -745)))
        ;; k = nearest(64 v / ln2); q = v - k (ln2 / 64), ln2 / 64 = 0.010830424696905538 - 6.563933424574842e-13
        (local.set $kf (f64x2.nearest (f64x2.mul (local.get $v) (v128.const f64x2 92.33248261689366 92.33248261689366))))
        (local.set $q (f64x2.sub
          (f64x2.sub (local.get $v) (f64x2.mul (local.get $kf) (v128.const f64x2 0.010830424696905538 0.010830424696905538)))
          (f64x2.mul (local.get $kf) (v128.const f64x2 -6.563933424574842e-13 -6.563933424574842e-13))))
        (local.set $p
          (f64x2.add (v128.const f64x2 1 1) (f64x2.mul (local.get $q)
          (f64x2.add (v128.const f64x2 1 1) (f64x2.mul (local.get $q)
          (f64x2.add (v128.const f64x2 0.5 0.5) (f64x2.mul (local.get $q)
          (f64x2.add (v128.const f64x2 0.16666666666666666 0.16666666666666666) (f64x2.mul (local.get $q)
          (f64x2.add (v128.const f64x2 0.041666666666666664 0.041666666666666664) (f64x2.mul (local.get $q)
            (v128.const f64x2 0.008333333333333333 0.008333333333333333))))))))))))
        ;; 2^(k / 64) = 2^(k >> 6) * T[k & 63]
        (local.set $ki (i32x4.trunc_sat_f64x2_s_zero (local.get $kf)))
        (local.set $e (i32x4.max_s
          (i32x4.add (i32x4.shr_s (local.get $ki) (i32.const 6)) (v128.const i32x4 1023 1023 1023 1023))
          (v128.const i32x4 0 0 0 0)))
        (local.set $e (i64x2.shl (i64x2.extend_low_i32x4_s (local.get $e)) (i32.const 52)))
        (local.set $ki (v128.and (local.get $ki) (v128.const i32x4 63 63 63 63)))
        (local.set $tl (f64x2.replace_lane 1
          (f64x2.splat (f64.load (i32.shl (i32x4.extract_lane 0 (local.get $ki)) (i32.const 3))))
          (f64.load (i32.shl (i32x4.extract_lane 1 (local.get $ki)) (i32.const 3)))))
        (local.set $acc (f64x2.add (local.get $acc) (f64x2.mul (f64x2.mul (local.get $e) (local.get $tl)) (local.get $p))))
        (local.set $j (i32.add (local.get $j) (i32.const 8)))
        (br $draw)))
      (f64.store (i32.add (local.get $pAcc) (i32.shl (i32.add (i32.mul (local.get $i) (local.get $m)) (local.get $s)) (i32.const 3)))
        (f64.add (f64x2.extract_lane 0 (local.get $acc)) (f64x2.extract_lane 1 (local.get $acc))))
      (local.set $s (i32.add (local.get $s) (i32.const 1)))
      (br $theta)))
      (local.set $i (i32.add (local.get $i) (i32.const 1)))
      (br $obj))))

  (func (export "sums32")
    (param $lo i32) (param $hi i32) (param $m i32) (param $pTheta i32)
    (param $pOff i32) (param $pXc i32) (param $pYc i32) (param $pDz i32) (param $pAcc i32)
    (param $pDx i32) (param $pDy i32) (param $pC i32)
    (local $i i32) (local $s i32) (local $th i32) (local $A f64) (local $b f64) (local $hs f64) (local $ht f64) (local $mu f64) (local $cc f64) (local $j i32) (local $j1 i32) (local $xc f64) (local $Rd f64) (local $Ud f64)
    (local $R v128) (local $U v128) (local $B v128) (local $HS v128) (local $HT v128)
    (local $dx v128) (local $r v128) (local $u v128) (local $v v128) (local $kf v128) (local $q v128)
    (local $p v128) (local $acc v128) (local $acc2 v128)
    (local.set $i (local.get $lo))
    (block $done (loop $obj
      (br_if $done (i32.ge_s (local.get $i) (local.get $hi)))
      (local.set $s (i32.const 0))
      (block $thetas (loop $theta
      (br_if $thetas (i32.ge_u (local.get $s) (local.get $m)))
      (local.set $th (i32.add (local.get $pTheta) (i32.mul (local.get $s) (i32.const 48))))
      (local.set $A (f64.load offset=0 (local.get $th)))
      (local.set $b (f64.load offset=8 (local.get $th)))
      (local.set $hs (f64.load offset=16 (local.get $th)))
      (local.set $ht (f64.load offset=24 (local.get $th)))
      (local.set $mu (f64.load offset=32 (local.get $th)))
      (local.set $cc (f64.load offset=40 (local.get $th)))
      (local.set $B (f32x4.splat (f32.demote_f64 (local.get $b))))
      (local.set $HS (f32x4.splat (f32.demote_f64 (local.get $hs))))
      (local.set $HT (f32x4.splat (f32.demote_f64 (local.get $ht))))
      (local.set $xc (f64.load (i32.add (local.get $pXc) (i32.shl (local.get $i) (i32.const 3)))))
      (local.set $Rd
        (f64.sub
          (f64.sub
            (f64.sub (f64.load (i32.add (local.get $pYc) (i32.shl (local.get $i) (i32.const 3)))) (local.get $A))
            (f64.mul (local.get $b) (local.get $xc)))
          (f64.mul (local.get $cc) (f64.load (i32.add (local.get $pDz) (i32.shl (local.get $i) (i32.const 3)))))))
      (local.set $Ud (f64.sub (local.get $xc) (local.get $mu)))
      (local.set $R (f32x4.splat (f32.demote_f64 (local.get $Rd))))
      (local.set $U (f32x4.splat (f32.demote_f64 (local.get $Ud))))
      (local.set $j (i32.shl (i32.load (i32.add (local.get $pOff) (i32.shl (local.get $i) (i32.const 2)))) (i32.const 2)))
      (local.set $j1 (i32.shl (i32.load (i32.add (local.get $pOff) (i32.shl (i32.add (local.get $i) (i32.const 1)) (i32.const 2)))) (i32.const 2)))
      (local.set $acc (v128.const f64x2 0 0))
      (local.set $acc2 (v128.const f64x2 0 0))
      (block $end (loop $draw
        (br_if $end (i32.ge_u (local.get $j) (local.get $j1)))
        (local.set $dx (v128.load (i32.add (local.get $pDx) (local.get $j))))
        (local.set $r (f32x4.sub
          (f32x4.add (local.get $R) (v128.load (i32.add (local.get $pDy) (local.get $j))))
          (f32x4.mul (local.get $B) (local.get $dx))))
        (local.set $u (f32x4.add (local.get $U) (local.get $dx)))
        (local.set $v (f32x4.sub
          (v128.load (i32.add (local.get $pC) (local.get $j)))
          (f32x4.add
            (f32x4.mul (local.get $HS) (f32x4.mul (local.get $r) (local.get $r)))
            (f32x4.mul (local.get $HT) (f32x4.mul (local.get $u) (local.get $u))))))
        (local.set $v (f32x4.pmax (local.get $v) (v128.const f32x4 -100 -100 -100 -100)))
        ;; k = nearest(v / ln2); q = v - k ln2, ln2 = 0.693359375 - 2.12194440e-4
        (local.set $kf (f32x4.nearest (f32x4.mul (local.get $v) (v128.const f32x4 1.4426950408889634 1.4426950408889634 1.4426950408889634 1.4426950408889634))))
        (local.set $q (f32x4.sub
          (f32x4.sub (local.get $v) (f32x4.mul (local.get $kf) (v128.const f32x4 0.693359375 0.693359375 0.693359375 0.693359375)))
          (f32x4.mul (local.get $kf) (v128.const f32x4 -2.12194440e-4 -2.12194440e-4 -2.12194440e-4 -2.12194440e-4))))
        (local.set $p
          (f32x4.add (v128.const f32x4 1 1 1 1) (f32x4.mul (local.get $q)
          (f32x4.add (v128.const f32x4 1 1 1 1) (f32x4.mul (local.get $q)
          (f32x4.add (v128.const f32x4 0.5 0.5 0.5 0.5) (f32x4.mul (local.get $q)
          (f32x4.add (v128.const f32x4 0.16666667 0.16666667 0.16666667 0.16666667) (f32x4.mul (local.get $q)
          (f32x4.add (v128.const f32x4 0.041666668 0.041666668 0.041666668 0.041666668) (f32x4.mul (local.get $q)
          (f32x4.add (v128.const f32x4 0.008333334 0.008333334 0.008333334 0.008333334) (f32x4.mul (local.get $q)
            (v128.const f32x4 0.0013888889 0.0013888889 0.0013888889 0.0013888889))))))))))))))
        ;; times 2^k from the exponent bits, max(k + 127, 0) << 23
        (local.set $p (f32x4.mul (local.get $p)
          (i32x4.shl
            (i32x4.max_s
              (i32x4.add (i32x4.trunc_sat_f32x4_s (local.get $kf)) (v128.const i32x4 127 127 127 127))
              (v128.const i32x4 0 0 0 0))
            (i32.const 23))))
        (local.set $acc (f64x2.add (local.get $acc) (f64x2.promote_low_f32x4 (local.get $p))))
        (local.set $acc2 (f64x2.add (local.get $acc2)
          (f64x2.promote_low_f32x4 (i8x16.shuffle 8 9 10 11 12 13 14 15 0 1 2 3 4 5 6 7 (local.get $p) (local.get $p)))))
        (local.set $j (i32.add (local.get $j) (i32.const 16)))
        (br $draw)))
      (local.set $acc (f64x2.add (local.get $acc) (local.get $acc2)))
      (f64.store (i32.add (local.get $pAcc) (i32.shl (i32.add (i32.mul (local.get $i) (local.get $m)) (local.get $s)) (i32.const 3)))
        (f64.add (f64x2.extract_lane 0 (local.get $acc)) (f64x2.extract_lane 1 (local.get $acc))))
      (local.set $s (i32.add (local.get $s) (i32.const 1)))
      (br $theta)))
      (local.set $i (i32.add (local.get $i) (i32.const 1)))
      (br $obj)))))
