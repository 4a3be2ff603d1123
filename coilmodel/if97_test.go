package coilmodel

import "math"

// if97Region1 is an independent implementation of IAPWS-IF97 Region 1
// (compressed liquid), Wagner et al. (2000), J. Eng. Gas Turbines Power
// 122:150, Table 2 coefficients and Table 3 relations, used only as the
// reference the property correlations are checked against. It returns the
// specific volume (m³/kg) and isobaric specific heat (J/(kg·K)) at T (K) and
// p (MPa).
func if97Region1(tK, pMPa float64) (vM3kg, cpJkgK float64) {
	ii := [...]int{0, 0, 0, 0, 0, 0, 0, 0, 1, 1, 1, 1, 1, 1, 2, 2, 2, 2, 2, 3, 3, 3, 4, 4, 4, 5, 8, 8, 21, 23, 29, 30, 31, 32}
	jj := [...]int{-2, -1, 0, 1, 2, 3, 4, 5, -9, -7, -1, 0, 1, 3, -3, 0, 1, 3, 17, -4, 0, 6, -5, -2, 10, -8, -11, -6, -29, -31, -38, -39, -40, -41}
	nn := [...]float64{0.14632971213167, -0.84548187169114, -0.37563603672040e1, 0.33855169168385e1,
		-0.95791963387872, 0.15772038513228, -0.16616417199501e-1, 0.81214629983568e-3,
		0.28319080123804e-3, -0.60706301565874e-3, -0.18990068218419e-1, -0.32529748770505e-1,
		-0.21841717175414e-1, -0.52838357969930e-4, -0.47184321073267e-3, -0.30001780793026e-3,
		0.47661393906987e-4, -0.44141845330846e-5, -0.72694996297594e-15, -0.31679644845054e-4,
		-0.28270797985312e-5, -0.85205128120103e-9, -0.22425281908000e-5, -0.65171222895601e-6,
		-0.14340432741345e-12, -0.40516996860117e-6, -0.12734301741641e-8, -0.17424871230634e-9,
		-0.68762131295531e-18, 0.14478307828521e-19, 0.26335781662795e-22, -0.11947622640071e-22,
		0.18228094581404e-23, -0.93537087292458e-25}
	const rSpec = 461.526 // J/(kg·K), IF97 Eq. 1
	pi := pMPa / 16.53
	tau := 1386 / tK
	var gp, gtt float64
	for k := range nn {
		i, j := float64(ii[k]), float64(jj[k])
		gp += -nn[k] * i * math.Pow(7.1-pi, i-1) * math.Pow(tau-1.222, j)
		gtt += nn[k] * math.Pow(7.1-pi, i) * j * (j - 1) * math.Pow(tau-1.222, j-2)
	}
	vM3kg = rSpec * tK / (pMPa * 1e6) * pi * gp
	cpJkgK = -rSpec * tau * tau * gtt
	return
}
