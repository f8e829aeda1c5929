package service

import (
	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
)

// The four v1 services. Methods not written yet answer Unimplemented through the
// embedded Unimplemented* types.

type catalogueServer struct {
	halovetv1.UnimplementedCatalogueServiceServer
	srv *Server
}

type shipmentServer struct {
	halovetv1.UnimplementedShipmentServiceServer
	srv *Server
}

type licensingServer struct {
	halovetv1.UnimplementedLicensingServiceServer
	srv *Server
}

type consumptionServer struct {
	halovetv1.UnimplementedConsumptionServiceServer
	srv *Server
}
